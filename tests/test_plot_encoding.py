"""The channel encoding of the flow and shift figures, read back from the artists (Agg).

Reference: our own documented contract (docs/gallery.md and
:mod:`anharmony.plots._encoding`): colour by l (|m| in 2D, parity in 1D, Ω or Λ of axial
blocks, one colour per Cartesian block); line style by j where spin–orbit channels exist
(j = l + ½ solid, j = l − ½ dashed) and by parity of axial blocks (π = + solid, π = −
dashed); perturbative partial sums never take a channel's dash; one small key explains the
encoding (a swatch per colour, an entry per line style), not one entry per curve.
"""

from __future__ import annotations

import os

import numpy as np
import pytest

os.environ.setdefault("MPLBACKEND", "Agg")

import xarray as xr

from anharmony import plots
from anharmony.plots import _style
from anharmony.plots._encoding import CHANNEL_DASH

SCAN = np.array([0.0, 0.5, 1.0])
LEVELS = 2


@pytest.fixture(autouse=True)
def _close_figures():
    yield
    import matplotlib.pyplot as plt

    plt.close("all")


def _dataset(labels, l, j=None, *, dimension=3, geometry=False, orders=3) -> xr.Dataset:
    """A small result with made-up levels (the figures only copy them): E = index + scan."""
    s, c, n = len(SCAN), len(labels), LEVELS
    energy = (np.arange(c * n, dtype=float).reshape(1, c, n) + 1.0) + SCAN[:, None, None]
    lev = ("scan", "channel", "level")
    data = {
        "energy": (lev, energy, {"units": "1"}),
        "bound": (lev, np.ones((s, c, n), dtype=np.int8), {"units": "1"}),
        "reference_energy": (lev, energy - 0.1 * SCAN[:, None, None], {"units": "1"}),
        "shift": (lev, 0.1 * SCAN[:, None, None] + 0 * energy, {"units": "1"}),
        "level_label": (("channel", "level"),
                        np.array([[f"{lab}#{m}" for m in range(n)] for lab in labels]),
                        {"units": "1"}),
    }
    coords = {"scan_value": ("scan", SCAN, {"units": "1", "parameter": "well[1].strength"}),
              "l": ("channel", np.asarray(l, dtype=np.int64)),
              "label": ("channel", np.asarray(labels))}
    if orders:
        k = np.arange(orders)
        coef = np.zeros((s, c, n, orders))
        coef[..., 0] = energy - 0.1 * SCAN[:, None, None]
        coef[..., 1] = 0.1 * SCAN[:, None, None]
        data["series_coefficient"] = ((*lev, "order"), coef, {"units": "1"})
        data["series_partial_sum"] = ((*lev, "order"), np.cumsum(coef, axis=-1),
                                      {"units": "1"})
        coords["order"] = ("order", k)
    if j is not None:
        coords["j"] = ("channel", np.asarray(j, dtype=float))
    if geometry:
        data["block_degeneracy"] = (("channel",), np.full(c, 2, dtype=np.int64),
                                    {"units": "1"})
    attrs = {"title": "encoding test", "unit_system": "oscillator", "dimension": dimension,
             "scan_parameter": "well[1].strength"}
    return xr.Dataset(data, coords=coords, attrs=attrs)


def _level_lines(fig, prefix):
    return {ln.get_gid(): ln for ax in fig.axes for ln in ax.lines
            if (ln.get_gid() or "").startswith(prefix + ":")}


def _dash(line):
    return line._unscaled_dash_pattern  # (offset, pattern); pattern None for a solid line


def _legend_texts(fig):
    return [t.get_text() for leg in fig.legends for t in leg.get_texts()]


SOLID = (0, None)
SPIN_LABELS = ["s1/2", "p1/2", "p3/2", "d3/2", "d5/2"]
SPIN_L, SPIN_J = [0, 1, 1, 2, 2], [0.5, 0.5, 1.5, 1.5, 2.5]


@pytest.mark.parametrize(("kind", "prefix", "sums"), [("flow", "energy", "partial_sum"),
                                                     ("shift", "shift", "pt_shift")])
def test_spin_orbit_channels_take_colour_by_l_and_dashes_by_j(kind, prefix, sums):
    ds = _dataset(SPIN_LABELS, SPIN_L, SPIN_J)
    fig = plots.make_figure(ds, kind, orders=[1, 2])
    lines = _level_lines(fig, prefix)
    assert len(lines) == len(SPIN_LABELS) * LEVELS
    for gid, ln in lines.items():
        c = int(gid.split(":")[1])
        l, j = SPIN_L[c], SPIN_J[c]
        assert ln.get_color() == _style.colour(l)
        assert _dash(ln) == (SOLID if j > l else CHANNEL_DASH)
    # the two j of one l share the colour and differ in line style; different l differ
    p12, p32 = lines[f"{prefix}:1:0"], lines[f"{prefix}:2:0"]
    assert p12.get_color() == p32.get_color() and _dash(p12) != _dash(p32)
    assert len({ln.get_color() for ln in lines.values()}) == 3
    # no partial sum looks like a channel: never solid, never the channel's dash
    partial = _level_lines(fig, sums)
    assert partial and all(_dash(ln) not in (SOLID, CHANNEL_DASH) for ln in partial.values())
    # one small key: a swatch per l, an entry per j style, the orders (not one per curve)
    texts = _legend_texts(fig)
    for key in ("l = 0 (s)", "l = 1 (p)", "l = 2 (d)", "diagonaliser, j = l + ½",
                "diagonaliser, j = l − ½"):
        assert key in texts
    assert len(texts) == 3 + 2 + 2 < len(lines)
    swatches = {t.get_text(): h for leg in fig.legends
                for t, h in zip(leg.get_texts(), leg.legend_handles, strict=True)}
    assert swatches["l = 1 (p)"].get_color() == _style.colour(1)
    assert _dash(swatches["diagonaliser, j = l − ½"]) == CHANNEL_DASH


def test_without_spin_every_channel_is_solid_and_the_partial_sums_keep_their_dashes():
    ds = _dataset(["s", "p", "d"], [0, 1, 2])
    fig = plots.make_figure(ds, "flow", orders=[1])
    lines = _level_lines(fig, "energy")
    assert all(_dash(ln) == SOLID for ln in lines.values())
    assert {ln.get_color() for ln in lines.values()} == {_style.colour(k) for k in range(3)}
    (first,) = {_dash(ln) for ln in _level_lines(fig, "partial_sum").values()}
    assert first == _style.dash(0)  # the usual first pattern when no channel is dashed
    texts = _legend_texts(fig)
    assert "diagonaliser" in texts and not any("j = " in t for t in texts)


def test_parity_channels_in_1d_are_coloured_by_parity():
    ds = _dataset(["even", "odd"], [0, 1], dimension=1)
    fig = plots.make_figure(ds, "shift")
    lines = _level_lines(fig, "shift")
    for gid, ln in lines.items():
        c = int(gid.split(":")[1])
        assert ln.get_color() == _style.colour(c) and _dash(ln) == SOLID
    assert {"even", "odd"} <= set(_legend_texts(fig))


def test_axial_blocks_take_colour_by_omega_and_dashes_by_parity():
    labels = ["1/2+", "1/2-", "3/2+", "3/2-", "5/2-"]
    ds = _dataset(labels, [-1] * 5, geometry=True, orders=0)
    fig = plots.make_figure(ds, "flow")
    lines = _level_lines(fig, "energy")
    rank = {"1/2": 0, "3/2": 1, "5/2": 2}
    for gid, ln in lines.items():
        lab = labels[int(gid.split(":")[1])]
        assert ln.get_color() == _style.colour(rank[lab[:-1]])
        assert _dash(ln) == (CHANNEL_DASH if lab.endswith("-") else SOLID)
    texts = _legend_texts(fig)
    for key in ("Ω = 1/2", "Ω = 3/2", "Ω = 5/2", "diagonaliser, π = +", "diagonaliser, π = −"):
        assert key in texts


def test_axial_blocks_without_spin_are_lambda_and_cartesian_blocks_one_colour_each():
    ds = _dataset(["0+", "1-", "2+"], [-1] * 3, geometry=True, orders=0)
    texts = _legend_texts(plots.make_figure(ds, "flow"))
    assert {"Λ = 0", "Λ = 1", "Λ = 2"} <= set(texts)
    cart = ["(+,+)", "(+,-)", "(-,+)", "(-,-)"]
    fig = plots.make_figure(_dataset(cart, [-1] * 4, geometry=True, orders=0), "flow")
    lines = _level_lines(fig, "energy")
    colours = {int(g.split(":")[1]): ln.get_color() for g, ln in lines.items()}
    assert len(set(colours.values())) == 4
    assert all(_dash(ln) == SOLID for ln in lines.values())
    assert {f"block {b}" for b in cart} <= set(_legend_texts(fig))


def test_one_channel_needs_no_channel_key():
    ds = _dataset(SPIN_LABELS, SPIN_L, SPIN_J)
    fig = plots.make_figure(ds, "flow", channel="p1/2", orders=[1])
    (ln, *_) = _level_lines(fig, "energy").values()
    assert _dash(ln) == CHANNEL_DASH  # still drawn as its j
    texts = _legend_texts(fig)
    assert "diagonaliser" in texts and not any(t.startswith("l = ") for t in texts)
    handles = {t.get_text(): h for leg in fig.legends
               for t, h in zip(leg.get_texts(), leg.legend_handles, strict=True)}
    assert _dash(handles["diagonaliser"]) == CHANNEL_DASH  # the key shows the line as drawn


def test_more_keys_than_hues_never_share_a_colour():
    # seven l: the palette's six hues would give l = 6 the colour of l = 0
    ds = _dataset([f"l{k}" for k in range(7)], list(range(7)), orders=0)
    fig = plots.make_figure(ds, "flow")
    by_l = {}
    for gid, ln in _level_lines(fig, "energy").items():
        by_l.setdefault(int(gid.split(":")[1]), set()).add(ln.get_color())
    assert all(len(c) == 1 for c in by_l.values())  # one colour per l
    assert len({c for cs in by_l.values() for c in cs}) == 7


def test_blocks_of_continuum_states_alone_get_no_swatch_and_no_colour_rank():
    labels = ["1/2+", "3/2-", "5/2+"]
    ds = _dataset(labels, [-1] * 3, geometry=True, orders=0)
    ds["bound"].values[:, 1] = 0  # the 3/2- block holds only discretised-continuum states
    fig = plots.make_figure(ds, "flow")
    texts = _legend_texts(fig)
    assert "Ω = 3/2" not in texts and {"Ω = 1/2", "Ω = 5/2"} <= set(texts)
    lines = _level_lines(fig, "energy")
    assert lines["energy:2:0"].get_color() == _style.colour(1)  # next rank after 1/2
    assert not any("π = −" in t for t in texts)  # no dashed block is drawn as a level


def test_the_key_keeps_the_level_entry_when_the_dashed_channel_has_no_bound_level():
    ds = _dataset(["s1/2", "p1/2"], [0, 1], [0.5, 0.5])
    ds["bound"].values[:, 1] = 0  # p1/2 (dashed) holds only continuum states
    ds.attrs["unit_system"] = "no-such-system"  # letters fall back to the atomic ones
    fig = plots.make_figure(ds, "flow", orders=[1])
    texts = _legend_texts(fig)
    assert "diagonaliser" in texts and "discretised continuum" in texts
    assert not any(t.startswith("l = ") for t in texts)  # one visible channel: no swatch
