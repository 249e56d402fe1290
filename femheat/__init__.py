"""femheat: finite-element heating and cooling of parts in furnaces."""

__version__ = "0.1.0"
