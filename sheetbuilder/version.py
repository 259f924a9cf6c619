"""The package's version: one place, read by the facade, the command line, the Guide and the renderer."""
__version__ = "0.1.0"
