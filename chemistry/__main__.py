"""``python -m bhchem`` is ``bhchem``."""
import sys

from bhchem.cli.main import main

sys.exit(main())
