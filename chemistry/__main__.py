"""``python -m chemistry`` is ``bhchem``."""
import sys

from .cli import main

sys.exit(main())
