"""Striae: a browser-based atlas for long, high-resolution star spectra."""

__version__ = "0.2.0"
