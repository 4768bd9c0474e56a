"""``python -m anharmony``: the command line of :mod:`anharmony.cli`."""

import sys

from .cli import main

sys.exit(main())
