"""The kit's version, at the bottom of the stages so that any module may record it."""

__version__ = "0.1.0"
