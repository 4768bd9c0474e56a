"""``anharmony show``: a result file as tables, in the units of the trade."""

from __future__ import annotations

import argparse
import math
from typing import Any

from ._common import EXIT_BAD_INPUT, EXIT_OK, SHOW_ALL_UP_TO, say

__all__ = ["ROUNDING_TEXT", "cmd_show"]


def _oscillators(ds: Any, k: int, scale: float, symbol: str, b_symbol: str) -> str:
    """The reference oscillator (ħω, b and how it was chosen) and, where it differs, the
    basis oscillator of scan point k: the reference's ħω is the harmonic frequency a reader
    takes from the table (a trap frequency, ω_e), the basis' may be re-optimised."""
    def pair(hw: float, b: float) -> str:
        return (f"hbar*omega = {scale * hw:.6g}{_unit_suffix(symbol)}, b = {b:.6g}"
                f"{_unit_suffix(b_symbol)}")

    basis = (float(ds.frequency.values[k]), float(ds.length.values[k]))
    method = str(ds.reference_method.values[k])
    if "reference_frequency" not in ds or "reference_length" not in ds:
        return f"{pair(*basis)} (basis; reference {method})"
    ref = (float(ds.reference_frequency.values[k]), float(ds.reference_length.values[k]))
    if not all(math.isfinite(v) for v in ref):
        return f"{pair(*basis)} (basis; reference {method})"
    if math.isclose(ref[0], basis[0], rel_tol=1e-9) and math.isclose(ref[1], basis[1],
                                                                      rel_tol=1e-9):
        return f"{pair(*ref)} (reference {method}, also the basis)"
    return f"reference {pair(*ref)} ({method}); basis {pair(*basis)}"


def _verdict(ds: Any, k: int, c: int, n: int, tol: float) -> str:
    import numpy as np

    if ds.sizes.get("order", 0) == 0:
        return "-"
    e = float(ds.energy.values[k, c, n])
    sums = ds.series_partial_sum.values[k, c, n]
    if str(ds.scan_value.attrs.get("parameter", "")) in ("coupling", "lambda"):
        # the stored sums are at λ = 1; the level of this point is that of its own λ
        lam = float(ds.scan_value.values[k])
        coef = ds.series_coefficient.values[k, c, n].astype(float)
        with np.errstate(all="ignore"):
            sums = np.cumsum(coef * lam ** np.arange(coef.size, dtype=float))
    if not (math.isfinite(e) and np.any(np.isfinite(sums))):
        return "n/a"
    d = np.abs(sums - e)
    d = np.where(np.isfinite(d), d, np.inf)
    err = float(ds.error_estimate.values[k, c, n])
    allowed = max(tol, err if math.isfinite(err) else 0.0)
    from ..series.verdict import partial_sum_verdict

    return partial_sum_verdict(d, allowed)


def _level_name(ds: Any, dim: int, c: int, n: int) -> str:
    """The stored spectroscopic label; for files without ``level_label``, made here."""
    if "level_label" in ds:
        return str(ds.level_label.values[c, n])
    from ..labels import level_label

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
    from ..units import display_energy_factor, get_units, units_symbol

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
    from ..units import units_symbol

    if "display_units" in attrs:
        return str(attrs["display_units"])
    return units_symbol(str(attrs.get("units", "")), system, quantity) or ""


def cmd_show(args: argparse.Namespace) -> int:
    import numpy as np

    from ..store import ResultFileError, read_dataset

    try:
        ds = read_dataset(args.result, plain=True)  # netCDF4 alone: no xarray import
    except ResultFileError as exc:
        say(str(exc))
        return EXIT_BAD_INPUT
    s = ds.sizes["scan"]
    hidden = 0
    if args.scan == "all":
        points = list(range(s))
    elif args.scan == "auto":
        points = list(range(s)) if s <= SHOW_ALL_UP_TO else sorted({0, s // 2, s - 1})
        hidden = s - len(points)
    else:
        try:
            k = int(args.scan)
        except ValueError:
            say(f"--scan: expected an index, all or auto; got {args.scan!r}")
            return EXIT_BAD_INPUT
        if not -s <= k < s:
            say(f"--scan: index {k} out of range; the file has {s} scan point(s)")
            return EXIT_BAD_INPUT
        points = [k % s]
    labels = [str(x) for x in ds.label.values]
    chans = list(range(len(labels)))
    if args.channel:
        missing = [c for c in args.channel if c not in labels]
        if missing:
            say(f"--channel: no channel {missing[0]!r}; the file has {', '.join(labels)}")
            return EXIT_BAD_INPUT
        chans = [labels.index(c) for c in args.channel]
    a = ds.attrs
    dim = int(a.get("dimension", 3))
    tol = float(a.get("tolerance", 0.0))
    try:
        scale, symbol = _display_units(a, args.units)
    except ValueError as exc:
        say(str(exc))
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
    if "series_term_order" in ds and any(int(o) != 1 for o in ds.series_term_order.values):
        print("  series: terms at orders " + ", ".join(
            f"well[{i}] {kind} {int(o)}" for i, (kind, o) in enumerate(zip(
                ds.series_term_kind.values, ds.series_term_order.values, strict=True)))
            + " (W(lambda) = sum_k lambda^k W_k)")
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
        print(f"\n{param} = {sv:g}{_unit_suffix(p_symbol)}: "
              + _oscillators(ds, k, scale, symbol, b_symbol))
        if "escape_barrier" in ds and math.isfinite(float(ds.escape_barrier.values[k])):
            eb = float(ds.escape_barrier.values[k])
            below = int(np.sum(ds.energy.values[k] < eb))
            print(f"  open well (V falls without bound one way): no level is bound; {below} "
                  f"level(s) lie below the escape barrier {scale * eb:.6g}{_unit_suffix(symbol)}"
                  " and are quasi-bound")
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
    if "shell_occupancy" in ds:
        _print_filling(ds, points, scale, symbol, b_symbol)
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
            from ..labels import channel_label

            what += f" {channel_label(int(a['dimension']), l, j if math.isfinite(j) else None)}"
        print(f"  {name!s:<18} {what:<14} {float(ds.fit_measured.values[k]):12.8g} "
              f"{float(ds.fit_sigma.values[k]):9.2g} {float(ds.fit_prediction.values[k]):14.8g} "
              f"{float(ds.fit_residual.values[k]):+8.2f}σ "
              f"{float(ds.fit_basis_error.values[k]):9.1e}")
    fit_notes = [w for w in str(a.get("fit_warnings", "")).splitlines() if w]
    for w in fit_notes:
        print(f"  warning: {w}")


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


def _print_filling(ds: Any, points: list[int], scale: float, symbol: str,
                   b_symbol: str) -> None:
    """The shell filling of each shown scan point, in one line, and the filled levels."""
    n = int(ds.shell_occupancy.attrs.get("particles", 0))
    print(f"\nshell filling: {n} particles in the levels of every channel, lowest first")
    for k in points:
        fermi = scale * float(ds.shell_fermi_energy.values[k])
        gap = float(ds.shell_gap.values[k])
        closed = "closed" if int(ds.shell_closed.values[k]) else "open"
        gap_text = f"{scale * gap:.6g}{_unit_suffix(symbol)}" if math.isfinite(gap) else "-"
        occ = ds.shell_occupancy.values[k]
        filled = ", ".join(f"{_level_name(ds, int(ds.attrs.get('dimension', 3)), c, m)}"
                           f" {occ[c, m]:g}" for c in range(occ.shape[0])
                           for m in range(occ.shape[1]) if occ[c, m] > 0)
        print(f"  [{k}] Fermi level {fermi:.6g}{_unit_suffix(symbol)} ({closed} shell), gap "
              f"{gap_text}, rms radius {float(ds.shell_rms_radius.values[k]):.5g}"
              f"{_unit_suffix(b_symbol)}; occupied: {filled}")
