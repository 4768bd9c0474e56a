"""Shell filling: independent particles in the levels of several channels of one well.

Degeneracy of one level (the number of particles it holds), by channel:

=============================  =========================================================
channel                        degeneracy
=============================  =========================================================
3D with j (spin–orbit)         2j + 1
3D without j                   (2l + 1) × ``spin_degeneracy`` (default 2: spin ½)
2D, angular number |m|         1 for m = 0, 2 for m ≠ 0 (±m), times ``spin_degeneracy``
1D (parity or no symmetry)     ``spin_degeneracy``
=============================  =========================================================

Levels are filled in ascending energy (ties keep the order of the spectra given, then the
radial index); the last level reached may be partly filled. Only bound levels are filled:
asking for more particles than the bound levels hold is refused.

Completeness (stated once)
--------------------------
A spectrum holds only the lowest levels that were asked for; a level not computed cannot be
filled. A channel is *complete* when every bound level it holds was computed: one of its
computed levels lies above the threshold, or its phase-space count of bound levels
(:attr:`Spectrum.bound_count_estimate`) is no larger than its computed bound levels. Every
level below the *horizon* — the lowest top computed level of the incomplete channels
(``inf`` when all are complete) — is known. The filling is trusted only when the last filled
level lies strictly below the horizon (so every level up to it, and the next level above
it, are known); otherwise :func:`fill_shells` refuses and names the channels and the level
count they need. ``closures`` holds only the shells whose gap lies below the horizon.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from .errors import InputError
from .observables.levels import rms_radius

__all__ = ["FilledLevel", "ShellFilling", "degeneracy", "fill_shells"]

TIE_RTOL = 1e-9  # levels closer than this (relative to the energy scale) form one shell


@dataclass(frozen=True)
class FilledLevel:
    """One level of the filling, in ascending energy."""

    label: str
    channel: str
    n: int
    energy: float
    degeneracy: int
    occupancy: float
    rms_radius: float


@dataclass(frozen=True)
class ShellFilling:
    """The result of :func:`fill_shells`.

    Attributes
    ----------
    levels : tuple of FilledLevel
        Every bound level of the spectra, ascending in energy, with its occupancy.
    particles : int
        Number of particles placed.
    fermi_energy : float
        Energy of the highest occupied level.
    closed : bool
        True when the highest occupied shell (set of levels at the Fermi energy) is full.
    gap : float
        Energy from the Fermi level up to the next empty level (NaN when there is none bound
        or the highest shell is not closed).
    closures : tuple of (int, float)
        For every shell that closes below the highest bound one, with the next shell below
        the horizon (module notes): (particle number at which it is full, gap to the next
        shell). Large gaps mark the magic numbers of the well.
    rms_radius : float
        √(Σ_k occ_k ⟨r²⟩_k / N), the rms radius of the filled orbitals.
    energy_unit, length_unit : str
    horizon : float
        Every level below this energy was computed (module notes); ``inf`` when every channel
        given is complete.
    """

    levels: tuple[FilledLevel, ...]
    particles: int
    fermi_energy: float
    closed: bool
    gap: float
    closures: tuple[tuple[int, float], ...]
    rms_radius: float
    energy_unit: str
    length_unit: str
    horizon: float = math.inf

    def table(self) -> list[str]:
        """The filling as printable lines: each level with its occupancy, then the read-outs."""
        from .units import units_symbol

        e = units_symbol(self.energy_unit, None, "energy") or self.energy_unit
        r = units_symbol(self.length_unit, None, "length") or self.length_unit
        lines = [f"{'level':>10} {'energy (' + e + ')':>16} {'2j+1':>5} {'occupied':>9} "
                 f"{'rms radius (' + r + ')':>18}"]
        for lv in self.levels:
            lines.append(f"{lv.label:>10} {lv.energy:16.6f} {lv.degeneracy:5d} "
                         f"{lv.occupancy:9g} {lv.rms_radius:18.4f}")
        shell = "closed" if self.closed else "open"
        gap = f"{self.gap:.4f} {e}" if math.isfinite(self.gap) else "none"
        lines += [f"{self.particles} particles: Fermi level {self.fermi_energy:.6f} {e} "
                  f"({shell} shell), gap above it {gap}",
                  f"rms radius of the filled orbitals {self.rms_radius:.4f} {r}",
                  "largest gaps above N = " + ", ".join(str(n) for n in self.magic_numbers(6))]
        return lines

    def magic_numbers(self, count: int) -> list[int]:
        """The ``count`` particle numbers with the largest gaps above them, ascending."""
        best = sorted(self.closures, key=lambda c: -c[1])[:count]
        return sorted(n for n, _ in best)


def degeneracy(channel, spin_degeneracy: int = 2) -> int:
    """Number of particles one level of ``channel`` holds (table in the module notes)."""
    if channel.j is not None:
        return round(2 * channel.j + 1)
    if channel.dimension == 3:
        return (2 * channel.l + 1) * spin_degeneracy
    if channel.dimension == 2:
        return (1 if channel.l == 0 else 2) * spin_degeneracy
    return spin_degeneracy


def fill_shells(spectra: Sequence, particles: int, spin_degeneracy: int = 2) -> ShellFilling:
    """Fill the bound levels of several channels with ``particles`` independent particles.

    Parameters
    ----------
    spectra : sequence of Spectrum
        One per channel, all of one well, dimension and unit system (e.g. every (l, j) channel
        up to some l). A channel missing from the list is simply not filled.
    particles
        Number of particles N ≥ 0.
    spin_degeneracy
        States per spatial orbital in channels without j (2 for spin ½, 1 for spinless).

    Returns
    -------
    ShellFilling

    Raises
    ------
    InputError
        Bad arguments; more particles than the bound levels given hold; or a channel whose
        levels were not all computed stops at or below the last filled level (module notes:
        completeness), so a level not computed could lie below it. The message names the
        channels and the levels per channel to ask for.
    """
    if isinstance(particles, bool) or not isinstance(particles, (int, np.integer)) \
            or particles < 0:
        raise InputError(f"particles: must be an integer >= 0; got {particles!r}")
    if isinstance(spin_degeneracy, bool) or spin_degeneracy not in (1, 2):
        raise InputError(f"spin_degeneracy: must be 1 or 2; got {spin_degeneracy!r}")
    spectra = list(spectra)
    if not spectra:
        raise InputError("spectra: give at least one spectrum")
    dims = {s.channel.dimension for s in spectra}
    systems = {s.units.name for s in spectra}
    if len(dims) > 1 or len(systems) > 1:
        raise InputError(f"spectra: all spectra need one dimension and unit system; got "
                         f"dimensions {sorted(dims)} and units {sorted(systems)}")
    keys = [(s.channel.l, s.channel.j) for s in spectra]
    if len(set(keys)) != len(keys):
        dup = next(s.channel.label for s, k in zip(spectra, keys, strict=True)
                   if keys.count(k) > 1)
        raise InputError(f"spectra: channel {dup!r} is given twice; its levels would be "
                         "counted twice")
    rows = []
    for order, s in enumerate(spectra):
        radii = rms_radius(s, warn=False)  # unbound levels are not filled
        g = degeneracy(s.channel, spin_degeneracy)
        for n in np.flatnonzero(s.bound):
            rows.append((float(s.energies[n]), order, int(n), s, g, float(radii[n])))
    rows.sort(key=lambda r: (r[0], r[1], r[2]))
    open_channels = _incomplete(spectra)
    horizon = min((top for _, top, _ in open_channels), default=math.inf)
    capacity = sum(r[4] for r in rows)
    if particles > capacity:
        raise InputError(f"particles: {particles} exceed the {capacity} states of the bound "
                         "levels given; add channels (higher l) or levels per channel")
    scale = max((abs(r[0]) for r in rows), default=1.0) or 1.0
    shells = _group(rows, TIE_RTOL * scale)
    sizes = np.array([sum(r[4] for r in shell) for shell in shells])
    full = np.cumsum(sizes)  # particles held up to and including each shell
    closures = tuple((int(full[k]), shells[k + 1][0][0] - shells[k][-1][0])
                     for k in range(len(shells) - 1) if shells[k + 1][-1][0] <= horizon)
    left = particles
    levels = []
    for shell in shells:
        for e, _, n, s, g, radius in shell:
            occ = min(g, left)
            left -= occ
            levels.append(FilledLevel(s.channel.level_label(n), s.channel.label, n, e, g,
                                      float(occ), radius))
    fermi, closed, gap = float("nan"), True, float("nan")
    if particles:
        k_f = int(np.searchsorted(full, particles))  # the shell holding the last particle
        fermi = max(lv.energy for lv in levels if lv.occupancy)
        if fermi >= horizon:
            raise InputError(_incomplete_message(particles, fermi, open_channels,
                                                 spectra[0].units))
        closed = bool(full[k_f] == particles)
        if closed and k_f + 1 < len(shells):
            gap = shells[k_f + 1][0][0] - shells[k_f][-1][0]
    occ = np.array([lv.occupancy for lv in levels])
    r2 = np.array([lv.rms_radius for lv in levels]) ** 2
    radius = float(np.sqrt(occ @ r2 / particles)) if particles else float("nan")
    first = spectra[0].units
    return ShellFilling(tuple(levels), int(particles), fermi, closed, float(gap), closures,
                        radius, first.energy, first.length, float(horizon))


def _incomplete(spectra: list) -> list[tuple[Any, float, float]]:
    """The channels whose bound levels may not all be computed (module notes), each as
    (spectrum, energy of its highest computed level, phase-space count of bound levels)."""
    out = []
    for s in spectra:
        energies = np.asarray(s.energies, dtype=float)
        if energies.size and not np.all(s.bound):
            continue  # a computed level above the threshold: every bound one is below it
        count = s.bound_count_estimate
        if int(np.count_nonzero(s.bound)) >= count:
            continue
        out.append((s, float(energies[-1]) if energies.size else -math.inf, float(count)))
    return out


def _incomplete_message(particles: int, fermi: float, open_channels: list, units) -> str:
    """Why a filling is refused, and the levels per channel to ask for."""
    from .units import units_symbol

    e = units_symbol(units.energy, None, "energy") or units.energy
    e = "" if e == "1" else " " + e
    short = [(s, top, count) for s, top, count in open_channels if top <= fermi]
    parts = []
    need = 0
    for s, top, count in short:
        n = int(np.asarray(s.energies).size)
        held = f"holds about {count:.0f} bound levels" if math.isfinite(count) else \
            "is confining (levels without end)"
        parts.append(f"{s.channel.label} ({n} computed, the highest at {top:.6g}{e}; it {held})")
        need = max(need, int(count) if math.isfinite(count) else n + 1)
    return (f"particles: {particles} particles reach {fermi:.6g}{e}, at or above the highest "
            "computed level of channel(s) " + "; ".join(parts) + ": a level not computed "
            f"may lie below the Fermi level; compute at least {need} levels per channel "
            "(levels= of solve; levels.count in a case file)")


def _group(rows: list, tol: float) -> list[list]:
    """Group sorted levels into shells of (numerically) equal energy."""
    shells: list[list] = []
    for r in rows:
        if shells and r[0] - shells[-1][-1][0] <= tol:
            shells[-1].append(r)
        else:
            shells.append([r])
    return shells
