"""clearway: from a DXF floor plan to a maximum-clearance lane graph for mobile robots."""

__version__ = "0.1.0"
__all__ = ["__version__"]
