"""The unit model classes; importing this package registers them."""

from unitmodels.units import streams  # noqa: F401
