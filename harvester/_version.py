"""The package version, in a module of its own so that any module can import it."""

__all__ = ["__version__"]

__version__ = "0.1.0.dev0"
