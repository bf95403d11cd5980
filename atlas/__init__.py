"""Striae: a browser-based atlas for long, high-resolution star spectra."""

__version__ = "0.1.0"
