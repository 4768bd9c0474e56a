"""How a figure against the scanned parameter tells its channels apart: colour and line style.

The channel is carried fully, and one small key explains the rule (not one entry per curve):

- central wells in 3D: colour by l (the same colour for an l in every figure), and where
  spin–orbit channels exist line style by j: j = l + ½ solid, j = l − ½ dashed;
- 2D: colour by |m|; 1D: colour by parity (even, odd), the basis without symmetry in the first
  colour;
- axial geometry results (blocks Ω^π, or Λ^π without spin): colour by Ω, line style by parity
  (π = + solid, π = − dashed); Cartesian blocks (parities of x, y, z): one colour per block.

Where a figure has more colour keys than the six hues of the palette (many l, or many Ω), the
keys take evenly spaced steps of the sequential colour map instead, so no two share a colour.

The dash of a channel is long and even (:data:`CHANNEL_DASH`); where it is in use the
perturbative partial sums take the other patterns of :data:`anharmony.plots._style.DASHES`, so
that no order looks like a channel (:func:`order_dash`).
"""

from __future__ import annotations

import dataclasses
import re
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from . import _style
from ._common import proxy

if TYPE_CHECKING:  # annotations only
    from ._common import ResultView

__all__ = ["CHANNEL_DASH", "SOLID", "ChannelStyle", "Encoding", "channel_encoding",
           "order_dash"]

SOLID = "-"
CHANNEL_DASH: tuple[float, tuple[float, ...]] = (0.0, (4.0, 2.0))  # j = l − ½, π = −
_AXIAL = re.compile(r"(\d+)(/2)?([+-])?")
_CARTESIAN = re.compile(r"\([+\-*](,[+\-*])*\)")


@dataclass(frozen=True)
class ChannelStyle:
    """Colour and line style of one channel's curves, and what they stand for."""

    colour: str
    linestyle: Any
    colour_key: str
    style_key: str = ""


@dataclass(frozen=True)
class Encoding:
    """The styles of the drawn channels (in their order) and the key that explains them.

    ``handles`` are the colour swatches (one per l, |m|, parity, Ω or block; none for a single
    channel); :meth:`level_handles` gives the entries of the level lines, one per line style
    in use.
    """

    styles: tuple[ChannelStyle, ...]
    shown: tuple[ChannelStyle, ...]  # the styles of the visible channels
    handles: tuple[Any, ...]

    @property
    def dashed(self) -> bool:
        """Whether a channel is drawn dashed (the partial sums then avoid plain dashes)."""
        return any(s.linestyle != SOLID for s in self.styles)

    def level_handles(self, label: str, **line: Any) -> list[Any]:
        """Legend entries of the level lines drawn with ``line`` (lw, marker…): ``label``
        alone, or ``"label, j = l + ½"`` and ``"label, j = l − ½"`` (π = ±) where the line
        style tells channels apart."""
        keys = dict.fromkeys((s.style_key, _hashable(s.linestyle)) for s in self.shown
                             if s.style_key)
        if not self.dashed or not keys:
            return [proxy(label=label, **line)]
        if len(keys) == 1:  # one style drawn (one channel): the entry is drawn as it is
            ((_, ls),) = keys
            return [proxy(ls=ls, label=label, **line)]
        return [proxy(ls=ls, label=f"{label}, {key}", **line) for key, ls in keys]


def order_dash(position: int, encoding: Encoding) -> tuple[float, tuple[float, ...]]:
    """The dash of the ``position``-th chosen order, never a channel's dash."""
    if not encoding.dashed:
        return _style.dash(position)
    others = _style.DASHES[1:]
    return others[position % len(others)]


def _fraction(two_j: int) -> str:
    return f"{two_j}/2" if two_j % 2 else str(two_j // 2)


def _central(view: ResultView, chans: Sequence[int]) -> list[ChannelStyle]:
    from ..labels import orbital_letter

    dim = view.dimension
    out = []
    for c in chans:
        l, j = view.l_of(c), view.j_of(c)
        if dim == 1:
            key = "x (no parity)" if l < 0 else ("even", "odd")[l]
            out.append(ChannelStyle(_style.colour(max(l, 0)), SOLID, key))
            continue
        if dim == 2:
            out.append(ChannelStyle(_style.colour(l), SOLID, f"|m| = {l}"))
            continue
        try:
            letter = orbital_letter(l, units=view.unit_system)
        except ValueError:  # a unit system this version does not know: atomic letters
            letter = orbital_letter(l)
        key = (f"J = {l}" if view.unit_system == "molecular" and j is None
               else f"l = {l} ({letter})")
        if j is None:
            out.append(ChannelStyle(_style.colour(l), SOLID, key))
        elif j < l:
            out.append(ChannelStyle(_style.colour(l), CHANNEL_DASH, key, "j = l − ½"))
        else:
            out.append(ChannelStyle(_style.colour(l), SOLID, key, "j = l + ½"))
    return out


def _blocks(labels: Sequence[str], chans: Sequence[int], visible: Sequence[bool]
            ) -> list[ChannelStyle] | None:
    """Styles of geometry blocks from their labels (``1/2+``, ``2-``, ``(+,-,*)``), or None;
    colours go by rank among the ``visible`` blocks (those with a bound level drawn)."""
    shown = [labels[c] for c in chans]
    if all(_AXIAL.fullmatch(s) for s in shown):
        parsed = [_AXIAL.fullmatch(s) for s in shown]
        spin = any(m[2] for m in parsed)
        values = [int(m[1]) / (2 if m[2] else 1) for m in parsed]
        seen = {v for v, vis in zip(values, visible, strict=True) if vis} or set(values)
        rank = {v: i for i, v in enumerate(sorted(seen))}
        rank.update({v: len(seen) + i for i, v in enumerate(sorted(set(values) - seen))})
        name = "Ω" if spin else "Λ"
        out = []
        for m, v in zip(parsed, values, strict=True):
            key = f"{name} = {_fraction(round(2 * v))}"
            if m[3] == "-":
                out.append(ChannelStyle(_style.colour(rank[v]), CHANNEL_DASH, key, "π = −"))
            else:
                out.append(ChannelStyle(_style.colour(rank[v]), SOLID, key,
                                        "π = +" if m[3] else ""))
        return out
    if all(_CARTESIAN.fullmatch(s) for s in shown):
        order = {s: i for i, s in enumerate(dict.fromkeys(
            [s for s, vis in zip(shown, visible, strict=True) if vis]
            + [s for s, vis in zip(shown, visible, strict=True) if not vis]))}
        return [ChannelStyle(_style.colour(order[s]), SOLID, f"block {s}") for s in shown]
    return None


def channel_encoding(view: ResultView, chans: Sequence[int], *, lw: float = 1.6,
                     marker: str | None = None, ms: float | None = None,
                     visible: Sequence[bool] | None = None) -> Encoding:
    """The colour and line style of each drawn channel, and the colour swatches explaining
    them (one per l, |m|, parity, Ω or block; the line styles: :meth:`Encoding.level_handles`).

    ``lw``, ``marker`` and ``ms`` are those of the figure's level lines, so the key looks like
    them. ``visible`` says which channels have a bound level drawn (default all): only those
    get a swatch and count for the colours (a block of continuum states alone is drawn grey
    anyway). With one visible channel the key is left out (the title names it).
    """
    vis = [True] * len(chans) if visible is None else [bool(v) for v in visible]
    geometry = view.has("block_degeneracy") and all(view.l_of(c) < 0 for c in chans)
    styles = _blocks(view.labels, chans, vis) if geometry else None
    if styles is None:
        styles = _central(view, chans)
    shown = [s for s, v in zip(styles, vis, strict=True) if v]
    recoloured = {id(s): r for s, r in zip(shown, _distinct(shown), strict=True)}
    styles = [recoloured.get(id(s), s) for s in styles]
    handles: list[Any] = []
    if sum(vis) > 1:
        extra = {"marker": marker, "ms": ms} if marker else {}
        for key, colour in dict.fromkeys((s.colour_key, s.colour) for s, v
                                         in zip(styles, vis, strict=True) if v):
            handles.append(proxy(color=colour, lw=lw, label=key, **extra))
    return Encoding(tuple(styles), tuple(s for s, v in zip(styles, vis, strict=True) if v)
                    or tuple(styles), tuple(handles))


def _distinct(styles: list[ChannelStyle]) -> list[ChannelStyle]:
    """The styles with one colour per key: where the palette would repeat a colour (more
    keys than its six hues), every key takes a step of the sequential map instead."""
    keys = list(dict.fromkeys(s.colour_key for s in styles))
    colours = {s.colour_key: s.colour for s in styles}
    if len(set(colours.values())) == len(keys):
        return styles
    from matplotlib import colormaps

    cmap = colormaps[_style.RC["image.cmap"]]
    steps = {k: cmap(0.9 * i / max(len(keys) - 1, 1)) for i, k in enumerate(keys)}
    hexes = {k: "#{:02x}{:02x}{:02x}".format(*(round(255 * c) for c in v[:3]))
             for k, v in steps.items()}
    return [dataclasses.replace(s, colour=hexes[s.colour_key]) for s in styles]


def _hashable(ls: Any) -> Any:
    if isinstance(ls, tuple):
        off, seq = ls
        return (off, tuple(seq))
    return ls

