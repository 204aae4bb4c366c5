"""The unit model classes; importing this package registers them."""

from unitmodels.units import heat, reactors, separators, streams  # noqa: F401
