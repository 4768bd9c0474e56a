"""Regenerate the figure gallery from the demo cases.

Runs the demo cases of ``cases/`` in memory (nothing is written there), draws every figure kind
with :func:`anharmony.plots.make_figure`, writes small PNGs to ``docs/img/`` and rewrites
``docs/gallery.md`` around them, so pictures and captions never drift apart.

Usage::

    python docs/make_gallery.py            # all figures
    python docs/make_gallery.py --dpi 100  # sharper, larger files

The PNGs are reduced to an adaptive palette (Pillow, which matplotlib already needs) to keep
each one under about 80 kB.
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import yaml

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
CASES = ROOT / "cases"
IMG = HERE / "img"
GALLERY = HERE / "gallery.md"
DEFAULT_DPI = 100  # gallery images: sharp on screen, still small (~10–40 kB) in the repository
PALETTE_COLOURS = 128  # adaptive palette of the saved PNGs (antialiasing stays smooth)


@dataclass(frozen=True)
class Entry:
    """One figure of the gallery."""

    name: str  # file stem in docs/img
    case: str  # case file in cases/
    kind: str
    heading: str
    caption: str
    index: int | None = None  # position in a file's cases: list
    options: dict[str, Any] = field(default_factory=dict)
    changes: dict[str, Any] = field(default_factory=dict)  # settings added to the case


CONVERGENCE_SIZES = {"convergence": {"sizes": [8, 12, 16, 20, 24, 32]}}

ENTRIES = [
    Entry("flow-quartic", "quartic-3d.yaml", "flow", "Level flow: a spherical oscillator "
          "with a growing quartic term",
          "The diagonaliser's levels (solid, coloured by l) against the quartic strength for "
          "s, p and d "
          "channels, with the Rayleigh–Schrödinger partial sums to first and second order "
          "(dashed, dotted) and the Borel–Padé values (open triangles). Low-order perturbation "
          "theory parts from the exact levels well before the strongest coupling."),
    Entry("flow-morse", "diatomic-morse.yaml", "flow", "Level flow: harmonic to Morse "
          "(coupling scan)",
          "Vibrational levels as the coupling λ takes the reference oscillator to the full "
          "Morse well. For a coupling scan the partial sums are Σ E_k λ^k at each λ; the Padé "
          "values exist at λ = 1 only."),
    Entry("shift-quartic", "quartic-3d.yaml", "shift", "Anharmonic shifts, log–log",
          "|E − E_ref| of the s levels against the quartic strength on log–log axes, with "
          "the first-order RS shift. The broad faint guides show the local slope of the "
          "first-order shift at small strength; a slope is written beside a level only where "
          "it is not 1 (the shift linear in the strength).",
          options={"log": True, "channel": "s"}),
    Entry("flow-deformed", "deformed-nucleus.yaml", "flow", "Neutron levels against the "
          "quadrupole deformation",
          "The Ω^π blocks of a deformed Woods–Saxon well with its deformed spin–orbit term "
          "(axial basis, spin ½) from oblate to prolate shapes; each level is labelled by its "
          "asymptotic quantum numbers Ω^π[N n_z Λ] at the prolate end, and the spherical j "
          "multiplets meet at β₂ = 0. The colour is Ω, the line style the parity (π = + "
          "solid, π = − dashed); blocks holding only continuum states are grey."),
    Entry("flow-proton", "proton-coulomb.yaml", "flow", "Spin–orbit partners against the "
          "proton charge",
          "Proton levels of a Woods–Saxon well with spin–orbit and Coulomb terms as the charge "
          "grows: the colour is l, the line style j (j = l + ½ solid, j = l − ½ dashed), so "
          "each spin–orbit pair shares a colour; the key explains the encoding once instead "
          "of naming every curve."),
    Entry("shift-dot", "dot-2d.yaml", "shift", "Anharmonic shifts in a 2D quantum dot",
          "Shifts of the |m| = 0, 1, 2 levels of a parabolic dot with a quartic correction, "
          "in units of ħω₀, beside the low-order perturbative shifts."),
    Entry("series-morse", "diatomic-morse.yaml", "series", "Perturbation series of the "
          "Morse ground state",
          "Left: |E_k| against the order with the large-order estimate (dashed). Right: the "
          "partial sums at λ = 1 beside the diagonaliser's level, the Padé value and the "
          "optimally truncated sum (star).", options={"levels": [0]}),
    Entry("series-quartic", "quartic-3d.yaml", "series", "A factorially divergent series",
          "The s-wave ground state at the strongest quartic term: the coefficients grow "
          "factorially and the partial sums run away after the first orders, while the "
          "resummed value stays on the level."),
    Entry("convergence-quartic", "quartic-3d.yaml", "convergence", "Convergence in the "
          "basis size",
          "|E(N) − E∞| against the basis size for the two lowest p levels, with the case "
          "tolerance, and the lowest level against N beside the best level and its error "
          "estimate. (The demo case is run here with `convergence: {sizes: [8, 12, 16, 20, "
          "24, 32]}` added.)", options={"channel": "p", "levels": [0, 1]},
          changes=CONVERGENCE_SIZES),
    Entry("well-trap", "trap-rb87.yaml", "well", "A Gaussian optical trap",
          "The even vibrational levels of ⁸⁷Rb in the deepest trap of the scan, drawn between "
          "their turning points, with |ψ(x)|² on each level (common scale)."),
    Entry("well-proton", "proton-coulomb.yaml", "well", "Proton s states: Woods–Saxon plus "
          "Coulomb",
          "The s1/2 channel at the full Coulomb charge: the barrier above the threshold and "
          "the radial densities r²R(r)² of the bound states."),
    Entry("well-morse", "diatomic-morse.yaml", "well", "The Morse well at λ = 1",
          "All eight computed levels of the Morse diatomic with their densities; the well is "
          "rebuilt from the case text stored in the result file.",
          options={"levels": list(range(8))}),
    Entry("scheme-neutron", "neutron-ws.yaml", "scheme", "Neutron level scheme, A = 40",
          "Bound neutron levels per (l, j) channel with spectroscopic labels, beside the "
          "oscillator shells N = 2(n − 1) + l of the basis frequency; the dotted guides "
          "carry each shell across, so spin–orbit splittings and shifts read directly.",
          index=1),
    Entry("scheme-proton", "proton-coulomb.yaml", "scheme", "Proton level scheme with "
          "Coulomb",
          "The same picture for protons at the full Coulomb charge: every level rises, the "
          "2p3/2 sits just below the threshold."),
]


def _load(entry: Entry) -> Any:
    from anharmony.cases import case_from_dict, load_cases

    path = CASES / entry.case
    if not entry.changes:
        cases = load_cases(path)
        return cases[entry.index or 0]
    data = yaml.safe_load(path.read_text(encoding="utf-8"))
    if entry.index is not None:
        data = data["cases"][entry.index]
    for key, value in entry.changes.items():
        data.setdefault(key, {}).update(value)
    return case_from_dict(data, name=str(path.relative_to(ROOT)), folder=CASES)


def _shrink_png(path: Path) -> None:
    """Rewrite a PNG with an adaptive palette, atomically."""
    from PIL import Image

    with Image.open(path) as img:
        small = img.convert("RGB").quantize(colors=PALETTE_COLOURS,
                                            method=Image.Quantize.MEDIANCUT,
                                            dither=Image.Dither.NONE)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp.png")
    os.close(fd)
    try:
        small.save(tmp, format="PNG", optimize=True)
        mask = os.umask(0)
        os.umask(mask)
        os.chmod(tmp, 0o666 & ~mask)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def _snippet(entry: Entry) -> str:
    opts = "".join(f", {k}={v!r}" for k, v in entry.options.items())
    return f'plots.make_figure(ds, "{entry.kind}"{opts})'


def _markdown(entries: list[Entry], sizes: dict[str, int]) -> str:
    lines = [
        "# Figure gallery",
        "",
        "<!-- Generated by docs/make_gallery.py; edit that script, not this file. -->",
        "",
        "Every figure below is drawn from a demo case of `cases/` by",
        "[`docs/make_gallery.py`](make_gallery.py); run `python docs/make_gallery.py` to",
        "regenerate them all. The same figures come from the command line,",
        "",
        "```sh",
        "anharmony run cases/quartic-3d.yaml -o out",
        "anharmony plot out/quartic-3d.nc --kind flow -o flow.png",
        "```",
        "",
        "or from Python:",
        "",
        "```python",
        "from anharmony import plots",
        "from anharmony.runner import run_case",
        'ds = run_case("cases/quartic-3d.yaml")  # or plots.make_figure("out/quartic-3d.nc", …)',
        'fig = plots.make_figure(ds, "flow")',
        'plots.save_figure(fig, "flow.pdf")',
        "```",
        "",
        "Kinds: " + ", ".join(f"`{k}`" for k in dict.fromkeys(e.kind for e in entries)) + ".",
        "Styles are the same in every figure: thick lines are the diagonaliser's levels,",
        "thin dashed and dotted lines perturbative partial sums, open markers resummed values;",
        "colour is never the only cue (curves are labelled directly), so the figures read in",
        "greyscale and for colour-blind readers. In the flow and shift figures the curves",
        "carry their channel: the colour is l (|m| in 2D, the parity in 1D, Ω or Λ of an",
        "axial block, one colour per Cartesian block) and, where spin–orbit channels exist,",
        "the line style is j (j = l + ½ solid, j = l − ½ dashed; for axial blocks the parity,",
        "π = + solid, π = − dashed). Where a line style tells channels apart the partial sums",
        "take dotted and dash-dot patterns only. One small key below the axes explains the",
        "encoding (a swatch per colour, an entry per line style), not every curve.",
        "",
        "The trap and quantum-dot figures are model results for idealised potentials, not a",
        "basis for building or operating hardware: see the caution in the",
        "[README](../README.md#a-caution-for-trap-and-device-planning) and follow your local",
        "regulations and laser-safety rules.",
        "",
    ]
    for e in entries:
        lines += [
            f"## {e.heading}",
            "",
            f"![{e.heading}](img/{e.name}.png)",
            "",
            e.caption,
            "",
            f"Case `cases/{e.case}`" + (f" (case {e.index + 1} of the file)"
                                        if e.index is not None else "")
            + f"; `{_snippet(e)}`.",
            "",
        ]
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--dpi", type=float, default=DEFAULT_DPI, help="PNG resolution")
    parser.add_argument("--only", action="append", metavar="NAME",
                        help="regenerate only this figure (repeatable), e.g. flow-quartic")
    args = parser.parse_args(argv)

    from anharmony import plots
    from anharmony.runner import run_case

    IMG.mkdir(exist_ok=True)
    wanted = [e for e in ENTRIES if not args.only or e.name in args.only]
    results: dict[tuple, Any] = {}
    sizes: dict[str, int] = {}
    for e in wanted:
        key = (e.case, e.index, repr(sorted(e.changes.items())))
        if key not in results:
            t0 = time.perf_counter()
            results[key] = run_case(_load(e))
            print(f"ran {e.case}" + (f"#{e.index + 1}" if e.index is not None else "")
                  + f" in {time.perf_counter() - t0:.1f} s", flush=True)
        fig = plots.make_figure(results[key], e.kind, **e.options)
        out = plots.save_figure(fig, IMG / f"{e.name}.png", dpi=args.dpi)
        _shrink_png(out)
        sizes[e.name] = out.stat().st_size
        print(f"  {out.relative_to(ROOT)}  {sizes[e.name] / 1024:.0f} kB", flush=True)
    if not args.only:
        GALLERY.write_text(_markdown(ENTRIES, sizes), encoding="utf-8")
        print(f"wrote {GALLERY.relative_to(ROOT)}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
