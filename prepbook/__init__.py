"""prepbook: preparation and standardization records for volumetric solutions."""

__version__ = "0.1.0"
