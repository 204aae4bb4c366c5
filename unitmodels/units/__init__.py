"""The unit model classes; importing this package registers them."""

from unitmodels.units import heat, streams  # noqa: F401
