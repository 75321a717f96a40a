"""layerplan: turn a photo into a layered painting plan at wall scale."""

__version__ = "0.1.0"
