"""The command line (DESIGN §7): ``anharmony run | check | show | plot``.

Exit codes: 0 success, 1 a computation failed, 2 bad input (one line per problem, no
traceback), 130 stopped by Ctrl-C (143 by SIGTERM). This is the only module that prints.
"""

from __future__ import annotations

import argparse
import math
import os
import sys
import warnings
from collections.abc import Sequence
from typing import Any, NoReturn, TextIO

from ._version import __version__

__all__ = ["main"]

EXIT_OK, EXIT_FAILED, EXIT_BAD_INPUT, EXIT_INTERRUPTED = 0, 1, 2, 130
_LINES_PER_RUN = 20  # off a terminal, at most about this many "k/N tasks" lines per batch
_SHOW_ALL_UP_TO = 5  # `show` prints every scan point up to this many, else first/middle/last


class _Parser(argparse.ArgumentParser):
    """argparse that reports a usage error in one line and exits 2."""

    def error(self, message: str) -> NoReturn:
        self.exit(EXIT_BAD_INPUT, f"{self.prog}: error: {message} (see {self.prog} --help)\n")


#: Set this environment variable to see the traceback of an internal error.
TRACEBACK_VARIABLE = "ANHARMONY_TRACEBACK"


def _parser() -> argparse.ArgumentParser:
    p = _Parser(prog="anharmony",
                description="Bound states, anharmonic shifts and perturbation series of "
                            "almost-harmonic wells, run from YAML case files.")
    p.add_argument("--version", action="version", version=f"anharmony {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    run = sub.add_parser("run", help="run case files and write one netCDF result per case",
                         description="Run every case of the given files and write one netCDF "
                                     "result per case (to the case's `output`).")
    run.add_argument("cases", nargs="+", metavar="CASE.yaml", help="case files")
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
    run.add_argument("--allow-long", action="store_true",
                     help="accept a case whose estimated work is beyond the limit of a few "
                          "hours on one core (refused otherwise, naming the setting)")

    check = sub.add_parser("check", help="validate case files and print the resolved cases",
                           description="Validate case files and print each resolved case: "
                                       "units, reference oscillator, channels and task count.")
    check.add_argument("cases", nargs="+", metavar="CASE.yaml", help="case files")
    check.add_argument("--no-reference", action="store_true",
                       help="skip resolving the reference oscillator and building the "
                            "Hamiltonians (validation only)")
    check.add_argument("--allow-long", action="store_true",
                       help="accept a case whose estimated work is beyond the limit of a few "
                            "hours on one core (refused otherwise, naming the setting)")

    show = sub.add_parser("show", help="print the levels, shifts and perturbation verdict of "
                                       "a result file",
                          description="Print levels, shifts and the perturbation verdict of a "
                                      "result file as a table.")
    show.add_argument("result", metavar="RESULT.nc", help="a result file of anharmony run")
    show.add_argument("--scan", default="auto", metavar="K|all|auto",
                      help="scan point(s) to print: an index, `all`, or `auto` (all up to "
                           f"{_SHOW_ALL_UP_TO}, else first, middle and last)")
    show.add_argument("--channel", metavar="LABEL", action="append",
                      help="only this channel (repeatable), e.g. s1/2")
    show.add_argument("--units", metavar="UNIT",
                      help="energy unit of the table (the file keeps its own): trap kHz, Hz, "
                           "MHz (E/h; for hbar*omega that is omega/2pi), uK, nK (E/k_B); "
                           "nuclear MeV, keV; molecular cm-1, THz, GHz, meV; dot meV, ueV, "
                           "THz; atomic hartree, eV, cm-1")

    plot = sub.add_parser("plot", help="draw a figure from a result file",
                          description="Draw a figure from a result file (needs anharmony.plots).")
    plot.add_argument("result", metavar="RESULT.nc", help="a result file of anharmony run")
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


# --------------------------------------------------------------------------- helpers
def _err(line: str) -> None:
    print(line, file=sys.stderr, flush=True)


def _problems(exc: Exception) -> int:
    from .cases import CaseError

    if isinstance(exc, CaseError):
        for p in exc.problems:
            _err(str(p))
    else:
        _err(str(exc))
    return EXIT_BAD_INPUT


def _interactive(stream: TextIO) -> bool:
    return bool(getattr(stream, "isatty", lambda: False)()) and not os.environ.get("CI")


class _Progress:
    """Progress of a batch: a tqdm bar on a terminal, or plain ``k/N tasks`` lines."""

    def __init__(self, mode: str, stream: TextIO) -> None:
        if mode == "auto":
            mode = "bar" if _interactive(stream) else "lines"
        self.mode = mode
        self.stream = stream
        self.bar: Any = None
        self.total = 0
        self.done = 0
        self.next_line = 0

    def say(self, line: str) -> None:
        if self.bar is not None:
            self.bar.write(line, file=self.stream)
        else:
            print(line, file=self.stream, flush=True)

    def __call__(self, kind: str, **info: Any) -> None:
        if kind == "start":
            self.total = info["tasks"]
            if self.mode == "bar" and self.total:
                from tqdm import tqdm

                self.bar = tqdm(total=self.total, unit="task", file=self.stream,
                                dynamic_ncols=True, leave=False)
            elif self.mode == "lines" and self.total:
                self.say(f"running {info['cases']} case(s), {self.total} task(s)")
            self.step = max(1, math.ceil(self.total / _LINES_PER_RUN))
            self.next_line = self.step
        elif kind == "tasks":
            self.done += info["n"]
            if self.bar is not None:
                self.bar.update(info["n"])
            elif self.mode == "lines" and (self.done >= self.next_line or
                                           self.done == self.total):
                self.say(f"{self.done}/{self.total} tasks")
                while self.next_line <= self.done:
                    self.next_line += self.step
        elif kind == "written":
            self.say(f"wrote {info['path']} ({info['case'].name})")
        elif kind == "skipped":
            self.say(f"up to date: {info['path']} ({info['case'].name})")
        elif kind == "failed":
            self.say(f"{info['case'].name}: failed: {info['message']}")
        elif kind == "warning":  # a level that is not converged; the run goes on
            self.say(f"warning: {info['case'].name}: {info['message']}")

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()
            self.bar = None


# --------------------------------------------------------------------------- run
def _held_signals() -> tuple[list[int], Any]:
    """Record SIGINT and SIGTERM (those not ignored at start) instead of acting on them;
    returns (the signals received, a function that puts the old handlers back).

    For the imports and the reading of the cases before a batch takes the signals over: an
    exception raised inside the import of a compiled module is turned into an ImportError
    with a traceback ("initialization failed"), and a SIGTERM there would end the run
    without a word.
    """
    import signal

    got: list[int] = []
    old: dict[int, Any] = {}

    def record(signum: int, frame: Any) -> None:
        got.append(signum)

    for signum in (signal.SIGINT, signal.SIGTERM):
        handler = signal.getsignal(signum)
        if handler not in (signal.SIG_IGN, None):  # ignored at start stays ignored
            old[signum] = signal.signal(signum, record)

    def restore() -> None:
        for signum, handler in old.items():
            signal.signal(signum, handler)

    return got, restore


def _stopped_line(signum: int) -> str:
    return "Ctrl-C" if signum == 2 else f"signal {signum}"


def _cmd_run(args: argparse.Namespace) -> int:
    if args.jobs < 1:
        _err(f"--jobs: must be at least 1; got {args.jobs}")
        return EXIT_BAD_INPUT
    if args.resume and args.overwrite:
        _err("--resume and --overwrite contradict each other (--resume keeps existing results, "
             "--overwrite replaces them): give one of them")
        return EXIT_BAD_INPUT
    # held for the whole command: the batch takes them over while it runs; before it (the
    # imports, reading the cases) they end the run with one line, after it (the summary; a
    # second signal of a stop) they are only recorded
    got, restore = _held_signals()
    try:
        return _run_held(args, got)
    finally:
        restore()


def _run_held(args: argparse.Namespace, got: list[int]) -> int:
    from .cases import CaseError, load_cases
    from .runner import preflight, run_batch
    from .runner.preflight import WORK_LIMIT_SECONDS

    try:
        cases = load_cases(args.cases)
    except CaseError as exc:
        return _problems(exc)
    found = [] if got else [i for case in cases for i in preflight(
        case, work_limit=None if args.allow_long else WORK_LIMIT_SECONDS)]
    if got:  # nothing was written or claimed yet
        _err(f"stopped by {_stopped_line(got[0])} before the run started")
        return 128 + got[0]
    if found:  # what `check` refuses, `run` refuses before it starts
        return _problems(CaseError(found))
    progress = _Progress(args.progress if args.progress != "off" else "off", sys.stderr)
    history = "anharmony " + " ".join(sys.argv[1:]) if sys.argv[1:] else None
    try:
        report = run_batch(cases, out_dir=args.output_dir, jobs=args.jobs,
                           scheduler=args.scheduler, resume=args.resume,
                           overwrite=args.overwrite, on_event=progress, history=history,
                           handle_signals=True, cross_check=args.cross_check)
    except CaseError as exc:
        progress.close()
        return _problems(exc)
    except ImportError as exc:
        progress.close()
        _err(f"--scheduler: {exc}")
        return EXIT_BAD_INPUT
    except OSError as exc:
        progress.close()
        _err(f"--scheduler: cannot reach {args.scheduler} ({exc})")
        return EXIT_FAILED
    progress.close()
    written = len(report.written)
    if report.interrupted is not None:
        name = _stopped_line(report.interrupted)
        done = ", ".join(str(p) for _, p in report.written) or "none"
        left = ", ".join(c.name for c in report.not_run) or "none"
        _err(f"stopped by {name}: finished {done}; not finished: {left}")
        return report.exit_code
    warned = (f"; {len(report.warnings)} convergence warning(s) above" if report.warnings
              else "")
    _err(f"{written} written, {len(report.skipped)} up to date, {len(report.failed)} "
         f"failed{warned}")
    return report.exit_code


# --------------------------------------------------------------------------- check
def _cmd_check(args: argparse.Namespace) -> int:
    from .cases import CaseError, estimate_work, load_cases
    from .runner import describe, preflight
    from .runner.preflight import WORK_LIMIT_SECONDS

    try:
        cases = load_cases(args.cases)
    except CaseError as exc:
        return _problems(exc)
    status = EXIT_OK
    for case in cases:
        text = describe(case, reference=not args.no_reference)
        for line in text.lines:
            print(line)
        print(f"  estimated work: {estimate_work(case).summary()}")
        found = preflight(case, numbers=not args.no_reference,
                          work_limit=None if args.allow_long else WORK_LIMIT_SECONDS)
        for issue in found:
            _err(str(issue))
        if found:
            status = EXIT_BAD_INPUT
    return status


# --------------------------------------------------------------------------- show
def _verdict(ds: Any, k: int, c: int, n: int, tol: float) -> str:
    import numpy as np

    if ds.sizes.get("order", 0) == 0:
        return "-"
    e = float(ds.energy.values[k, c, n])
    sums = ds.series_partial_sum.values[k, c, n]
    if not (math.isfinite(e) and np.any(np.isfinite(sums))):
        return "n/a"
    d = np.abs(sums - e)
    d = np.where(np.isfinite(d), d, np.inf)
    err = float(ds.error_estimate.values[k, c, n])
    allowed = max(tol, err if math.isfinite(err) else 0.0)
    from .series.verdict import partial_sum_verdict

    return partial_sum_verdict(d, allowed)


def _level_name(ds: Any, dim: int, c: int, n: int) -> str:
    """The stored spectroscopic label; for files without ``level_label``, made here."""
    if "level_label" in ds:
        return str(ds.level_label.values[c, n])
    from .labels import level_label

    jc = float(ds.j.values[c]) if "j" in ds else None
    return level_label(dim, int(ds.l.values[c]), jc, n)


def _rows(ds: Any, k: int, chans: list[int], ladder: bool) -> list[tuple[int, int]]:
    """(channel, level) of the finite levels at scan point k: per channel, or one ladder."""
    rows = [(c, n) for c in chans for n in range(ds.sizes["level"])
            if math.isfinite(float(ds.energy.values[k, c, n]))]
    if ladder:
        rows.sort(key=lambda cn: float(ds.energy.values[k, cn[0], cn[1]]))
    return rows


ROUNDING_TEXT = "<rounding"  # an error estimate at or below the rounding floor
ROUNDING_ULPS = 4.0  # floor of a file without `rounding_floor`: a few ulp of the energy scale


def _rounding_floor(ds: Any, k: int, c: int, energy: float) -> float:
    """The accuracy floor of a level at scan point k in channel c.

    The file's ``rounding_floor`` (scan, channel) where it stores one; else a few ulp of
    max(|E|, N ħω), N the basis size and ħω the basis': the oscillator part of H has
    diagonal elements up to about N ħω, so this is a lower estimate of the eigensolver's
    floor eps·‖H‖ that the error estimates include. An estimate at or below it is rounding,
    not a measured error.
    """
    import numpy as np

    if "rounding_floor" in ds:
        value = ds["rounding_floor"].values
        value = float(value[k, c] if np.ndim(value) == 2 else value)
        if math.isfinite(value):
            return value
    size = float(ds.attrs.get("basis_size", 0))
    if "convergence_size" in ds and ds["convergence_size"].ndim == 2:
        size = max(size, float(ds["convergence_size"].values[k, c]))
    scale = max(abs(energy), size * abs(float(ds.frequency.values[k])))
    if not math.isfinite(scale):
        return 0.0
    return ROUNDING_ULPS * float(np.finfo(float).eps) * scale


def _display_units(attrs: Any, unit: str | None) -> tuple[float, str]:
    """(factor, symbol) of the table's energies: stored × factor; symbol from the unit table."""
    from .units import display_energy_factor, get_units, units_symbol

    name = str(attrs.get("unit_system", "oscillator"))
    try:
        system = get_units(name)
    except ValueError:  # a file from another version: keep the stored numbers
        if unit is not None:
            raise
        stored = str(attrs.get("energy_units", ""))
        return 1.0, units_symbol(stored, name, "energy") or stored
    return display_energy_factor(system, unit)


def _unit_suffix(symbol: str) -> str:
    return "" if symbol in ("", "ħω", "b") else f" {symbol}"


def _symbol(attrs: Any, system: Any, quantity: str | None = None) -> str:
    """Screen symbol of a variable's unit: its ``display_units``, else from the unit table."""
    from .units import units_symbol

    if "display_units" in attrs:
        return str(attrs["display_units"])
    return units_symbol(str(attrs.get("units", "")), system, quantity) or ""


def _cmd_show(args: argparse.Namespace) -> int:
    import numpy as np

    from .store import ResultFileError, read_dataset

    try:
        ds = read_dataset(args.result, plain=True)  # netCDF4 alone: no xarray import
    except ResultFileError as exc:
        _err(str(exc))
        return EXIT_BAD_INPUT
    s = ds.sizes["scan"]
    hidden = 0
    if args.scan == "all":
        points = list(range(s))
    elif args.scan == "auto":
        points = list(range(s)) if s <= _SHOW_ALL_UP_TO else sorted({0, s // 2, s - 1})
        hidden = s - len(points)
    else:
        try:
            k = int(args.scan)
        except ValueError:
            _err(f"--scan: expected an index, all or auto; got {args.scan!r}")
            return EXIT_BAD_INPUT
        if not -s <= k < s:
            _err(f"--scan: index {k} out of range; the file has {s} scan point(s)")
            return EXIT_BAD_INPUT
        points = [k % s]
    labels = [str(x) for x in ds.label.values]
    chans = list(range(len(labels)))
    if args.channel:
        missing = [c for c in args.channel if c not in labels]
        if missing:
            _err(f"--channel: no channel {missing[0]!r}; the file has {', '.join(labels)}")
            return EXIT_BAD_INPUT
        chans = [labels.index(c) for c in args.channel]
    a = ds.attrs
    dim = int(a.get("dimension", 3))
    tol = float(a.get("tolerance", 0.0))
    try:
        scale, symbol = _display_units(a, args.units)
    except ValueError as exc:
        _err(str(exc))
        return EXIT_BAD_INPUT
    shown_units = "units of hbar*omega" if symbol == "ħω" else symbol
    print(f"{a.get('title', '')}  [{a.get('unit_system', '')}; energies in {shown_units}]")
    if a.get("unit_system") in ("trap", "dot"):
        print("  note: model results for an idealised potential, not a basis for building or "
              "operating hardware (see the README's caution)")
    print(f"  from {a.get('case_file', '?')}; {a.get('source', '')}; {a.get('history', '')}")
    if "convergence" in a:
        print(f"  convergence: {a['convergence']}; converged = error below {tol * scale:g}"
              f"{_unit_suffix(symbol)}")
    param = ds.scan_value.attrs.get("parameter", "coupling")
    p_symbol = _symbol(ds.scan_value.attrs, a.get("unit_system"))
    b_symbol = _symbol(ds.length.attrs, a.get("unit_system"), "length")
    xdiff = ds["cross_check_difference"].values if "cross_check_difference" in ds else None
    xcheck = xdiff is not None and bool(np.isfinite(xdiff).any())
    grown = "convergence_size" in ds and "grown" in str(a.get("convergence", ""))
    # a symmetric 1D well: one ladder in energy order, the parity beside each level
    ladder = dim == 1 and len(chans) > 1 and all(int(ds.l.values[c]) >= 0 for c in chans)
    head = (f"  {'level':>12}" + (f" {'parity':>6}" if ladder else "")
            + f" {'energy':>14} {'reference':>14} {'shift':>12} {'bound':>6} "
            f"{'error':>9} {'conv':>5}" + (f" {'x-check':>9}" if xcheck else "")
            + "  perturbation")
    floored = False
    for k in points:
        sv = float(ds.scan_value.values[k])
        hw = scale * float(ds.frequency.values[k])
        print(f"\n{param} = {sv:g}{_unit_suffix(p_symbol)}: hbar*omega = "
              f"{hw:.6g}{_unit_suffix(symbol)}, b = {float(ds.length.values[k]):.6g}"
              f"{_unit_suffix(b_symbol)} ({ds.reference_method.values[k]})")
        if grown:
            reached = ", ".join(f"{labels[c]} {int(ds.convergence_size.values[k, c])}"
                                for c in chans)
            print(f"  basis grown per channel to: {reached}")
        print(head)
        for c, n in _rows(ds, k, chans, ladder):
            e = float(ds.energy.values[k, c, n])
            ref = float(ds.reference_energy.values[k, c, n])
            bound = "yes" if int(ds.bound.values[k, c, n]) else "no"
            err = float(ds.error_estimate.values[k, c, n])
            below = err <= _rounding_floor(ds, k, c, e)
            floored |= below
            errs = (f"{ROUNDING_TEXT:>9}" if below else f"{scale * err:9.1e}"
                    if math.isfinite(err) else f"{'-':>9}")
            e, ref = scale * e, scale * ref
            conv = ("yes" if int(ds.converged.values[k, c, n])
                    else "NO" if bound == "yes" else "-")  # continuum: no level to converge
            extra = ""
            if xcheck:
                x = scale * float(xdiff[k, c, n])
                extra = f" {x:+9.1e}" if math.isfinite(x) else f" {'-':>9}"
            name = _level_name(ds, dim, c, n)
            if "level_asymptotic_label" in ds:  # a geometry block: Ω^π[N n_z Λ] at this point
                asym, block = str(ds.level_asymptotic_label.values[k, c, n]), labels[c]
                name = asym if asym.startswith(block) else f"{block} {asym}".strip()
            parity = f" {('even', 'odd')[int(ds.l.values[c])]:>6}" if ladder else ""
            refs = (f"{ref:14.8g} {e - ref:12.5g}" if math.isfinite(ref)
                    else f"{'-':>14} {'-':>12}")  # no reference oscillator (geometries)
            print(f"  {name:>12}{parity} {e:14.8g} {refs} {bound:>6} {errs} {conv:>5}{extra}  "
                  f"{_verdict(ds, k, c, n, tol)}")
    if "fit_value" in ds:
        _print_fit(ds, shown_units)
    if "rovib_energy" in ds:
        _print_rotation(ds, scale, shown_units)
    notes = [w for w in str(a.get("convergence_warnings", "")).splitlines() if w]
    if hidden:
        print(f"\n{hidden} of {s} scan points not shown (first, middle and last are); "
              "--scan all shows every point, --scan K one point")
    if floored:
        print(f"\nerror {ROUNDING_TEXT}: the error estimate is at the rounding floor of the "
              "eigenvalues (nothing above rounding is left to estimate)")
    if xcheck:
        print("\nx-check: energy minus the level of the cross-check solver "
              "(cross_check_difference)")
    if notes:
        print(f"\n{len(notes)} convergence warning(s):")
        for w in notes:
            print(f"  {w}")
    return EXIT_OK


def _print_fit(ds: Any, energy_units: str) -> None:
    """The fit table: each parameter with its uncertainty and unit, χ² and dof, and each
    datum measured, fitted and its residual in σ."""
    a = ds.attrs
    print("\nfit of the well (the levels above are those of the fitted well):")
    print(f"  {'parameter':<20} {'value':>14} {'uncertainty':>12}  unit")
    for p, v, u, unit in zip(ds.fit_parameter.values, ds.fit_value.values,
                             ds.fit_uncertainty.values, ds.fit_parameter_units.values,
                             strict=True):
        unit = "hbar*omega" if str(unit) == "1" and energy_units.startswith("units") else unit
        print(f"  {p!s:<20} {float(v):14.8g} {float(u):12.2g}  {unit}")
    chi2, dof = float(a.get("fit_chi2", math.nan)), int(a.get("fit_dof", 0))
    reduced = f", chi2/dof = {chi2 / dof:.4g}" if dof > 0 else ""
    print(f"  chi2 = {chi2:.4g}, dof = {dof}{reduced}")
    corr = ds.fit_correlation.values
    names = [str(p) for p in ds.fit_parameter.values]
    pairs = [f"{names[i]} ~ {names[k]} {corr[i, k]:+.4f}" for i in range(len(names))
             for k in range(i + 1, len(names))]
    if pairs:
        print(f"  correlation: {'; '.join(pairs)}")
    if a.get("fit_undetermined"):
        print(f"  not fixed by the data: {a['fit_undetermined']}")
    print(f"\n  {'datum':<18} {'quantity':<14} {'measured':>12} {'sigma':>9} {'fitted':>14} "
          f"{'residual':>9} {'basis err':>9}")
    for k, name in enumerate(ds.fit_datum.values):
        lev_a, lev_b = int(ds.fit_level_a.values[k]), int(ds.fit_level_b.values[k])
        quantity = str(ds.fit_quantity.values[k])
        what = (f"E{lev_b} - E{lev_a}" if lev_b >= 0 else
                f"r_rms{lev_a}" if quantity == "rms_radius" else f"E{lev_a}")
        l = int(ds.fit_l.values[k])
        j = float(ds.fit_j.values[k])
        if l >= 0 and int(a.get("dimension", 1)) > 1:
            from .labels import channel_label

            what += f" {channel_label(int(a['dimension']), l, j if math.isfinite(j) else None)}"
        print(f"  {name!s:<18} {what:<14} {float(ds.fit_measured.values[k]):12.8g} "
              f"{float(ds.fit_sigma.values[k]):9.2g} {float(ds.fit_prediction.values[k]):14.8g} "
              f"{float(ds.fit_residual.values[k]):+8.2f}σ "
              f"{float(ds.fit_basis_error.values[k]):9.1e}")
    fit_notes = [w for w in str(a.get("fit_warnings", "")).splitlines() if w]
    for w in fit_notes:
        print(f"  warning: {w}")


# --------------------------------------------------------------------------- plot
def _print_rotation(ds: Any, scale: float, energy_units: str) -> None:
    """The table E(v, J) (rows v, columns J) and the Dunham constants with their standard
    errors, in the shown energy units."""
    js = [int(j) for j in ds.rovib_J.values]
    e = scale * ds.rovib_energy.values
    print(f"\nrovibrational levels E(v, J) in {energy_units} (rows v, columns J):")
    print("  " + f"{'v':>4}" + "".join(f"{f'J={j}':>16}" for j in js))
    for n, v in enumerate(ds.rovib_v.values):
        cells = "".join(f"{x:16.8g}" if math.isfinite(x) else f"{'unbound':>16}"
                        for x in e[:, n])
        print(f"  {int(v):>4}{cells}")
    print(f"\nspectroscopic constants (Dunham fit of E(v, J)) in {energy_units}:")
    for name in ("we", "wexe", "weye", "Be", "alpha_e", "De"):
        if f"constant_{name}" not in ds:
            continue
        value = scale * float(ds[f"constant_{name}"])
        err = scale * float(ds[f"constant_{name}_uncertainty"])
        print(f"  {name:<8} {value:18.10g} ± {err:.2g}")
    for w in str(ds.attrs.get("rovib_warnings", "")).splitlines():
        if w:
            print(f"  warning: {w}")


def _cmd_plot(args: argparse.Namespace) -> int:
    try:
        from . import plots  # the figures live in their own optional module
    except ImportError as exc:
        _err(f"plot: figures are not available in this installation ({exc})")
        return EXIT_FAILED
    make, save = getattr(plots, "make_figure", None), getattr(plots, "save_figure", None)
    if make is None or save is None:
        _err("plot: anharmony.plots has no make_figure/save_figure")
        return EXIT_FAILED
    from .store import ResultFileError, read_dataset

    try:
        ds = read_dataset(args.result)
    except ResultFileError as exc:
        _err(str(exc))
        return EXIT_BAD_INPUT
    try:
        channel = args.channel[0] if args.channel and len(args.channel) == 1 else args.channel
        fig = make(ds, args.kind, channel=channel, scan_index=args.scan, levels=args.levels,
                   orders=args.orders, methods=args.methods, log=args.log,
                   basis_size=args.basis_size, size=tuple(args.size) if args.size else None,
                   title=args.title)
        path = save(fig, args.output, dpi=args.dpi)
    except (ValueError, KeyError, IndexError) as exc:
        _err(f"plot: {exc}")
        return EXIT_BAD_INPUT
    except OSError as exc:
        _err(f"plot: cannot write {args.output} ({exc.strerror or exc})")
        return EXIT_BAD_INPUT
    print(f"wrote {path}")
    return EXIT_OK


_COMMANDS = {"run": _cmd_run, "check": _cmd_check, "show": _cmd_show, "plot": _cmd_plot}


_BLAS_VARS = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")


def _one_blas_thread() -> None:
    """One BLAS thread per process unless the user chose otherwise in the environment.

    Our matrices are small (N ≲ 500): BLAS threads only add hand-off cost, and on a busy
    machine they slow eigh by orders of magnitude; ``--jobs`` is the way to use more cores.
    """
    if any(v in os.environ for v in _BLAS_VARS):
        return
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:
        return
    threadpool_limits(limits=1, user_api="blas")


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``anharmony`` command; returns the exit code."""
    parser = _parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help(sys.stderr)
        return EXIT_BAD_INPUT
    shown = warnings.showwarning
    warnings.showwarning = _warning_line
    try:
        _one_blas_thread()  # inside: a Ctrl-C while it imports ends with one line too
        return _COMMANDS[args.command](args)
    except KeyboardInterrupt:
        _err("stopped by Ctrl-C")
        return EXIT_INTERRUPTED
    except BrokenPipeError:  # e.g. `anharmony show x.nc | head`
        sys.stderr.close()
        return EXIT_OK
    except Exception as exc:  # a bug of ours: one line, the traceback only when asked for
        if os.environ.get(TRACEBACK_VARIABLE):
            raise
        _err(f"anharmony: internal error: {type(exc).__name__}: {str(exc)[:300]} -- this is a "
             f"bug; please report it with the input that caused it ({TRACEBACK_VARIABLE}=1 "
             "shows the traceback)")
        return EXIT_FAILED
    finally:
        warnings.showwarning = shown


def _warning_line(message: Warning | str, category: type[Warning], filename: str,
                  lineno: int, file: TextIO | None = None, line: str | None = None) -> None:
    """A warning as one line ``warning: …`` on stderr, without Python's source location."""
    _err(f"warning: {message}")


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
