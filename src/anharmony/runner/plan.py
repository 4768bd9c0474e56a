"""Planning a case: its jobs, the references they share, and a description for ``check``.

A case is split into *jobs*. When the scanned parameter enters the Hamiltonian linearly and
the basis is the same at every scan point, a job is one channel over all scan points (the core
scan builds H = A + s·B once); otherwise a job is one scan point over all channels, with the
reference oscillator resolved at that point. A case with a convergence study has one job per
(scan point, channel). A case with a ``fit:`` block is one job: the fit, then the levels of
the fitted well.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..cases import Case, resolve_reference
from ..errors import AnharmonyError
from ..reference import Reference
from ..scan import linear_in, pencil_applies

__all__ = ["Description", "Job", "describe", "level_jobs", "output_path", "plan_case",
           "smaller_size"]


@dataclass(frozen=True)
class Job:
    """One unit sent to a worker.

    ``kind`` is ``"linear"`` (one channel, all scan points, references given),
    ``"points"`` (the listed scan points, every channel), ``"geometry"`` (one scan point of a
    Cartesian or axial case, every block), ``"filling"`` (the shell filling of one scan
    point), ``"fit"`` (the case's fit, then
    every level of the fitted well) or ``"rotation"`` (the rovibrational levels and Dunham
    constants of a case with a ``rotation:`` block).
    """

    case_key: int
    kind: str
    points: tuple[int, ...]
    channels: tuple[int, ...]
    references: tuple[Reference, ...] | None = None

    @property
    def weight(self) -> int:
        """Number of tasks (scan point × channel, or scan point for a geometry job)."""
        return len(self.points) * max(1, len(self.channels))


def references(case: Case) -> tuple[Reference, ...]:
    """The reference oscillator of every scan point (one per point, shared by the channels)."""
    values = case.scan_values()
    if case.scan_target.kind == "coupling":
        return (resolve_reference(case, None),) * len(values)
    return tuple(resolve_reference(case, v) for v in values)


def _scanned_in_core(case: Case) -> bool:
    """Whether the scan parameter is one the core scan sets (coupling or a term's)."""
    return (case.model.scan is not None and case.scan_target.kind in ("coupling", "term")
            and not case.scan_target.linked)


def _one_pencil(case: Case, refs: tuple[Reference, ...]) -> bool:
    if not _scanned_in_core(case) or len(refs) < 2:
        return False
    return pencil_applies(case.well_at(None), case.scan_parameter, refs,
                          case.basis_length_at(None), case.channels()[0].l)


def plan_case(case: Case, case_key: int = 0) -> list[Job]:
    """Split a case into jobs (see the module docstring).

    A case with a ``fit:`` block is one ``"fit"`` job: the fit, then the jobs of
    :func:`level_jobs` for the fitted well, in the same worker.
    """
    if case.model.fit is not None:
        return [Job(case_key, "fit", (0,), tuple(range(len(case.channels()))))]
    if case.model.space.geometry != "central":  # blocks, not channels: one job per point
        return [Job(case_key, "geometry", (k,), ()) for k in range(len(case.scan_values()))]
    jobs = level_jobs(case, case_key)
    if case.model.rotation is not None:
        jobs.append(Job(case_key, "rotation", (0,), (0,)))
    if case.model.filling is not None:  # the spectra again, with their vectors, per point
        jobs += [Job(case_key, "filling", (k,), tuple(range(len(case.channels()))))
                 for k in range(len(case.scan_values()))]
    return jobs


def level_jobs(case: Case, case_key: int = 0) -> list[Job]:
    """The jobs of a case's levels, series and study (a ``fit:`` block is not looked at)."""
    values = case.scan_values()
    chans = tuple(range(len(case.channels())))
    if case.model.convergence.study:  # one converge() per (scan point, channel)
        return [Job(case_key, "points", (k,), (c,)) for k in range(len(values)) for c in chans]
    if _scanned_in_core(case) and len(values) > 1:
        refs = references(case)
        if _one_pencil(case, refs):
            return [Job(case_key, "linear", tuple(range(len(values))), (c,), refs)
                    for c in chans]
    return [Job(case_key, "points", (k,), chans) for k in range(len(values))]


def smaller_size(case: Case) -> int | None:
    """M of the quick error estimate |E(N) − E(M)|, or None when it is not made."""
    n = case.model.basis.size
    if case.model.convergence.estimate == "none":
        return None
    sizes = [s for s in (case.model.convergence.sizes or []) if s < n]
    m = max(sizes) if sizes else n - n // 4
    return m if 1 <= m < n else None


def output_path(case: Case, out_dir: str | Path | None) -> Path:
    """Where a case's result goes (``out_dir`` replaces the case's folder)."""
    return case.output if out_dir is None else Path(out_dir) / case.output.name


# =========================================================================== describe
@dataclass(frozen=True)
class Description:
    """What ``anharmony check`` prints for one case.

    ``lines`` are the printed lines; ``problem`` is the reference oscillator's error message
    when it cannot be resolved (then ``check`` exits 2).
    """

    lines: list[str] = field(default_factory=list)
    problem: str | None = None


def _fmt(x: float) -> str:
    return f"{x:.6g}"


def _term_text(spec: dict) -> str:
    (name, params), = spec.items()
    inner = ", ".join(f"{k}: {v}" for k, v in (params or {}).items())
    return f"{name}{{{inner}}}"


def describe(case: Case, *, reference: bool = True) -> Description:
    """The resolved case in words: units, reference oscillator, channels, scan and tasks."""
    m = case.model
    u = case.units
    chans = case.channels()
    values = case.scan_values()
    mass = case.mass if case.mass is not None else u.default_mass
    lines = [f"{case.name}: {m.title or '(no title)'}",
             f"  units      {u.name} (energy {u.energy_text}, length {u.length_text}); mass "
             f"{mass:g} {u.mass_text}"
             + ("" if case.mass is not None else f" ({u.default_mass_note})"),
             f"  well       {' + '.join(_term_text(t) for t in m.well)}"]
    problem = None
    geometry = m.space.geometry
    if geometry != "central":  # blocks instead of channels (runner/assemble.py)
        shells = m.space.shells if m.space.shells is not None else 12
        spin = any(name.endswith("spin_orbit") for spec in m.well for name in spec)
        blocks = ("parity triples" if geometry == "cartesian" else
                  "Ω^π (spin 1/2)" if spin else "Λ^π")
        lines += [f"  geometry   {geometry}, dimension {m.space.dimension}: blocks are {blocks}"
                  + (f"; N_max = {shells}" if "size" not in m.basis.model_fields_set else
                     f"; at least {m.basis.size} states, whole shells")
                  + f" ({m.space.truncation or 'shells'} truncation), "
                  f"length {m.basis.length}; {m.levels.count} levels per block",
                  ("  errors     nested truncations below N_max" if "size" in
                   m.basis.model_fields_set else
                   f"  errors     nested truncations below {shells} shells")
                  + f"; converged below {m.convergence.tolerance:g} {u.energy_text}"]
        if m.scan is not None:
            lines.append(f"  scan       {case.scan_parameter}: {len(values)} values "
                         f"{values[0]:g} … {values[-1]:g} (one solve of every block per point)")
        lines.append(f"  output     {output_path(case, None)}")
        return Description(lines, None)
    if reference:
        try:
            ref = resolve_reference(case, values[0])
        except (AnharmonyError, ValueError, ArithmeticError) as exc:  # preflight reports it
            lines.append(f"  reference  cannot be resolved: {exc}")
            problem = str(exc)
        else:
            where = "" if len(values) == 1 else f" at {case.scan_parameter} = {values[0]:g}"
            lines += [f"  reference  hbar*omega = {_fmt(ref.frequency)} {u.energy_text}, b = "
                      f"{_fmt(ref.length)} {u.length_text}, centre {_fmt(ref.center)}, "
                      f"V_min = {_fmt(ref.v_min)}{where}",
                      f"             {ref.method}: {ref.reason}"]
    lines += [f"  basis      {m.basis.size} states per channel, length {m.basis.length}",
              f"  channels   {', '.join(c.label for c in chans)} ({len(chans)}); "
              f"{m.levels.count} levels each"]
    if m.scan is not None:
        how = ("per point and channel, for the convergence study" if m.convergence.study
               else ("polynomial in lambda by the term orders: matrices built once"
                     if case.scan_target.kind == "coupling"
                     and any(o != 1 for o in case.well_at(None).orders)
                     else "linear: matrices built once") if _linear(case)
               else "rebuilt per point")
        lines.append(f"  scan       {case.scan_parameter}: {len(values)} values "
                     f"{values[0]:g} … {values[-1]:g} ({how})")
    if m.perturbation is not None:
        p = m.perturbation
        lines.append(f"  series     orders 0…{p.orders}, exact {p.exact}, resum "
                     f"{', '.join(p.resum) or 'none'}")
    if m.fit is not None:
        lines.append(f"  fit        {_fit_text(case)}")
    if m.rotation is not None:
        js = m.rotation.values()
        lines.append(f"  rotation   J = {js[0]} … {js[-1]} ({len(js)} radial channels l = J, "
                     f"v = 0 … {m.levels.count - 1}); Dunham constants we, wexe, weye, Be, "
                     "alpha_e, De")
    lines += [f"  {'study' if m.convergence.study else 'errors':<10} {_study_text(case)}",
              f"  tasks      {len(values) * len(chans)} ({len(values)} scan point(s) × "
              f"{len(chans)} channel(s))",
              f"  output     {output_path(case, None)}"]
    return Description(lines, problem)


def _fit_text(case: Case) -> str:
    """The fit of a case in one line: its parameters and how many data of which kind."""
    params = case.fit_parameters()
    rows = case.fit_data.rows if case.fit_data else ()
    spacings = sum(1 for d in rows if d.get("quantity", "spacing" if "levels" in d
                                            else "level") == "spacing")
    kinds = ", ".join(f"{n} {w}{'s' if n != 1 else ''}" for n, w in
                      ((len(rows) - spacings, "level"), (spacings, "spacing")) if n)
    source = f" from {case.fit_data.name}" if case.fit_data and case.fit_data.source else ""
    return (f"{len(params)} parameter(s) {', '.join(params)} to {len(rows)} data ({kinds})"
            f"{source}; then the levels of the fitted well")


def _linear(case: Case) -> bool:
    """Whether the scanned parameter enters H linearly (checked without references)."""
    return _scanned_in_core(case) and linear_in(case.well_at(None), case.scan_parameter)


def _study_text(case: Any) -> str:
    """The convergence settings of a case in one line."""
    conv = case.model.convergence
    unit = "hbar*omega" if case.units.energy == "1" else case.units.energy
    tol = f"converged below {conv.tolerance:g} {unit}"
    if not conv.study:
        if conv.method == "none":
            return "not estimated (convergence.estimate: none)"
        return f"change from {smaller_size(case)} to {case.model.basis.size} states; {tol}"
    s = case.study_settings()
    sizes = s.size_axis(case.model.levels.count)
    if not conv.scans_lengths:
        where = "at the basis length"
    elif s.lengths is not None:
        where = f"lengths {', '.join(f'{b:g}' for b in s.lengths)} {case.units.length}"
    elif s.frequencies is not None:
        where = f"hbar*omega {', '.join(f'{w:g}' for w in s.frequencies)} {unit}"
    else:
        where = "lengths auto (re-optimised at each size)"
    grow = (f"basis grows to the tolerance, sizes {sizes[0]} … {sizes[-1]}" if conv.grows
            else f"sizes {', '.join(str(n) for n in sizes)}")
    return (f"{grow}, {where}; error_estimate: {conv.method}; {tol}"
            + ("; cross-check" if conv.cross_check else ""))
