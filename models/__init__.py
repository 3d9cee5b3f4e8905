"""Bundled family plug-ins: one module per family, each defining ``FAMILY``.

A module here declares a family (symbols, expressions, parameters) and nothing
else; see DEVELOPERS.md for how to add one.
"""
