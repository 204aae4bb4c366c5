"""The unit model classes; importing this package registers them."""

from unitmodels.units import heat, pressure, reactors, separators, streams  # noqa: F401
