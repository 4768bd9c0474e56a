"""The argument parser of the ``anharmony`` command: every command and option, documented."""

from __future__ import annotations

import argparse

from .._version import __version__
from ._common import SHOW_ALL_UP_TO, Parser

__all__ = ["build_parser"]

#: Arguments that more than one command takes, written once: name → (flags, keywords).
_SHARED = {
    "cases": (("cases",), {"nargs": "+", "metavar": "CASE.yaml", "help": "case files"}),
    "result": (("result",), {"metavar": "RESULT.nc", "help": "a result file of anharmony run"}),
    "allow-long": (("--allow-long",), {
        "action": "store_true",
        "help": "accept a case whose estimated work is beyond the limit of a few hours on one "
                "core (refused otherwise, naming the setting)"}),
}


def _add_shared(parser: argparse.ArgumentParser, name: str) -> None:
    flags, keywords = _SHARED[name]
    parser.add_argument(*flags, **keywords)


def build_parser() -> argparse.ArgumentParser:
    p = Parser(prog="anharmony",
                description="Bound states, anharmonic shifts and perturbation series of "
                            "almost-harmonic wells, run from YAML case files.")
    p.add_argument("--version", action="version", version=f"anharmony {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND", parser_class=Parser)

    run = sub.add_parser("run", help="run case files and write one netCDF result per case",
                         description="Run every case of the given files and write one netCDF "
                                     "result per case (to the case's `output`).")
    _add_shared(run, "cases")
    run.add_argument("-o", "--output-dir", metavar="DIR",
                     help="write every result into DIR (created if missing) instead of beside "
                          "its case file")
    run.add_argument("-j", "--jobs", type=int, default=1, metavar="N",
                     help="worker processes (default 1: run in this process)")
    run.add_argument("--resume", action="store_true",
                     help="skip cases whose result exists and was made from the same case "
                          "text")
    run.add_argument("--overwrite", action="store_true",
                     help="replace existing results (otherwise they are never overwritten); "
                          "not with --resume")
    run.add_argument("--scheduler", metavar="ADDRESS",
                     help="run on a dask.distributed scheduler at ADDRESS (needs the "
                          "[cluster] extra); overrides --jobs")
    run.add_argument("--progress", choices=("auto", "bar", "lines", "off"), default="auto",
                     help="progress display: a bar on a terminal and plain lines otherwise "
                          "(auto), always a bar, always lines, or none")
    run.add_argument("--cross-check", action="store_true",
                     help="also solve every channel with the cross-check solver of another "
                          "family (as convergence: {cross_check: true} in every case) and "
                          "store its difference from the basis result")
    _add_shared(run, "allow-long")

    check = sub.add_parser("check", help="validate case files and print the resolved cases",
                           description="Validate case files and print each resolved case: "
                                       "units, reference oscillator, channels and task count.")
    _add_shared(check, "cases")
    check.add_argument("--no-reference", action="store_true",
                       help="skip resolving the reference oscillator and building the "
                            "Hamiltonians (validation only)")
    _add_shared(check, "allow-long")

    show = sub.add_parser("show", help="print the levels, shifts and perturbation verdict of "
                                       "a result file",
                          description="Print levels, shifts and the perturbation verdict of a "
                                      "result file as a table.")
    _add_shared(show, "result")
    show.add_argument("--scan", default="auto", metavar="K|all|auto",
                      help="scan point(s) to print: an index, `all`, or `auto` (all up to "
                           f"{SHOW_ALL_UP_TO}, else first, middle and last)")
    show.add_argument("--channel", metavar="LABEL", action="append",
                      help="only this channel (repeatable), e.g. s1/2")
    show.add_argument("--units", metavar="UNIT",
                      help="energy unit of the table (the file keeps its own): trap kHz, Hz, "
                           "MHz (E/h; for hbar*omega that is omega/2pi), uK, nK (E/k_B); "
                           "nuclear MeV, keV; molecular cm-1, THz, GHz, meV; dot meV, ueV, "
                           "THz; atomic hartree, eV, cm-1")

    plot = sub.add_parser("plot", help="draw a figure from a result file",
                          description="Draw a figure from a result file (needs anharmony.plots).")
    _add_shared(plot, "result")
    plot.add_argument("--kind", required=True,
                      choices=("flow", "shift", "series", "convergence", "well", "scheme",
                               "residuals"),
                      help="which figure")
    plot.add_argument("-o", "--output", required=True, metavar="FIG.png",
                      help="the figure file to write (.png, .pdf or .svg)")
    plot.add_argument("--channel", metavar="LABEL", action="append",
                      help="only this channel (repeatable), e.g. d5/2")
    plot.add_argument("--scan", type=int, metavar="K",
                      help="scan point of the series, convergence, well and scheme figures "
                           "(default the last; negative counts from the end)")
    plot.add_argument("--dpi", type=float, metavar="DPI",
                      help="resolution of a PNG (default the plots module's)")
    plot.add_argument("--levels", type=_int_list, metavar="N[,N…]",
                      help="0-based levels per channel to draw, e.g. 0,1 (default: all; "
                           "series and convergence: the lowest; well and scheme: the bound)")
    plot.add_argument("--orders", type=_int_list, metavar="K[,K…]",
                      help="perturbation orders whose partial sums flow and shift draw "
                           "(default 1,2)")
    plot.add_argument("--methods", type=lambda s: [m.strip() for m in s.split(",") if m.strip()],
                      metavar="M[,M…]",
                      help="resummation methods to draw in flow and series: pade, borel_pade "
                           "(default: all in the file)")
    plot.add_argument("--log", action="store_true",
                      help="log-log axes in the shift figure, with the low-order slope")
    plot.add_argument("--basis-size", type=int, metavar="N",
                      help="basis size of the energy-against-length panel of convergence")
    plot.add_argument("--size", type=float, nargs=2, metavar=("W", "H"),
                      help="figure size in inches (default per kind)")
    plot.add_argument("--title", metavar="TEXT",
                      help="figure title (default: the case title)")
    return p


def _int_list(text: str) -> list[int]:
    try:
        return [int(t) for t in text.split(",") if t.strip()]
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected integers separated by commas; got {text!r}"
                                         ) from None
