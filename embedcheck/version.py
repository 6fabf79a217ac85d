"""The package version, in a module of its own so that every stage may name it cheaply."""
__all__ = ["__version__"]

__version__ = "0.1.0"
