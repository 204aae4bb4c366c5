"""plantopt: economic steady-state optimization of process plants.

Results are advisory. Plant changes follow the site's management-of-change
procedure; local codes and licensed engineering review prevail.
"""

__version__ = "0.1.0"
