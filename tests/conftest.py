"""Shared test settings: headless plotting and named tolerances."""

import os

os.environ.setdefault("MPLBACKEND", "Agg")
