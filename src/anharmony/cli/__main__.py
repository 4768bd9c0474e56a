"""``python -m anharmony.cli``: the command line."""

import sys

from .main import main

sys.exit(main())
