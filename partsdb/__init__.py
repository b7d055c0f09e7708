"""partsdb: drawer stock and substitute finder for discrete transistors."""

__version__ = "0.1.0"
