"""The ``bhchem`` command line (see :mod:`bhchem.cli.main`)."""
from bhchem.cli.main import main

__all__ = ["main"]
