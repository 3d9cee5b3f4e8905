"""Presentation layer: JSON/text/LaTeX serialisation and figures.  Formats and draws the
results it is given; it does not search, solve or fit."""
