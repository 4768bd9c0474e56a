"""The visual style of anharmony figures: palette, dash patterns, markers, rc settings.

The palette is our own: six hues spread over two lightness bands (dark ink blue, plum, rust;
light amber, sky, sage) so that neighbours in the cycle differ in lightness as well as hue,
which keeps them apart in greyscale print and for readers with red–green colour deficiency.
Colour is never the only cue: perturbative partial sums are dashed, resummed values are open
markers, the diagonaliser's levels are solid, and curves carry direct labels.
"""

from __future__ import annotations

from typing import Any

__all__ = [
    "CONTINUUM",
    "DASHES",
    "INK",
    "METHOD_MARKERS",
    "PALETTE",
    "RC",
    "SOFT",
    "colour",
    "dash",
    "method_marker",
]

# Alternating dark / light so that adjacent cycle entries differ in greyscale.
PALETTE = (
    "#23468c",  # ink blue (dark)
    "#e39a2d",  # amber (light)
    "#7c2e6b",  # plum (dark)
    "#62b0dc",  # sky (light)
    "#a8431c",  # rust (mid-dark)
    "#9dbf7a",  # sage (light)
)
INK = "#1e1e24"  # text, axes and exact values
SOFT = "#8d8d96"  # guides: shells, thresholds, bands' edges
CONTINUUM = "#b4b4bb"  # discretised-continuum states

# Dash patterns for perturbative partial sums, one per chosen order (on-off in points).
DASHES: tuple[tuple[float, tuple[float, ...]], ...] = (
    (0.0, (5.0, 2.0)),
    (0.0, (1.2, 1.6)),
    (0.0, (7.0, 2.0, 1.5, 2.0)),
    (0.0, (3.0, 1.5)),
    (0.0, (9.0, 2.5, 1.5, 2.5, 1.5, 2.5)),
)

# Open markers for resummation methods (by method name; unknown methods cycle the tail).
METHOD_MARKERS = {"pade": "o", "borel_pade": "^", "borel": "s", "optimal": "*"}
_SPARE_MARKERS = ("D", "v", "P", "X", "h")

RC: dict[str, Any] = {
    "font.family": "DejaVu Sans",
    "font.size": 8.5,
    "axes.titlesize": 8.5,
    "axes.titleweight": "normal",
    "axes.labelsize": 8.5,
    "axes.edgecolor": INK,
    "axes.labelcolor": INK,
    "axes.linewidth": 0.7,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.facecolor": "#fdfdfb",
    "axes.grid": True,
    "axes.axisbelow": True,
    "grid.color": "#dcdcd6",
    "grid.linewidth": 0.5,
    "grid.linestyle": "-",
    "xtick.direction": "out",
    "ytick.direction": "out",
    "xtick.color": INK,
    "ytick.color": INK,
    "xtick.labelsize": 7.5,
    "ytick.labelsize": 7.5,
    "xtick.major.size": 3.0,
    "ytick.major.size": 3.0,
    "legend.frameon": False,
    "legend.fontsize": 7.0,
    "legend.handlelength": 2.6,
    "lines.linewidth": 1.4,
    "lines.markersize": 4.5,
    "figure.facecolor": "white",
    "figure.titlesize": 10.0,
    "figure.titleweight": "bold",
    "savefig.facecolor": "white",
    "svg.hashsalt": "anharmony",  # stable element ids: regenerated SVGs diff cleanly
    "svg.fonttype": "path",
    "pdf.fonttype": 42,
    "image.cmap": "cividis",
}


def colour(i: int) -> str:
    """The i-th colour of the cycle."""
    return PALETTE[i % len(PALETTE)]


def dash(i: int) -> tuple[float, tuple[float, ...]]:
    """The i-th dash pattern for perturbative partial sums."""
    return DASHES[i % len(DASHES)]


def method_marker(method: str, i: int) -> str:
    """Marker of a resummation method (``i`` its position, for methods without one)."""
    return METHOD_MARKERS.get(method, _SPARE_MARKERS[i % len(_SPARE_MARKERS)])
