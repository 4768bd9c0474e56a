"""The coupling path of a scan: the well (1 − λ) V_ref + Σ_k λ^k V_k at each λ (the path of
:func:`anharmony.series.series`, H_ref + λ W₁ + Σ_{k≥2} λ^k W_k, with every term at first order
H_ref + λ (H − H_ref)), the reference oscillator as a well, and the thresholds along the path."""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np

from .errors import InputError
from .hamiltonian import Channel
from .pencil import coupling_threshold
from .reference import Reference
from .terms import linear_parameters
from .well import Well

SCALED = linear_parameters()


def reference_well(well: Well, ref: Reference, radial: bool) -> Well:
    """V_ref = v_min + ½ m ω² (x − x₀)² of a reference oscillator, in the well's units."""
    harmonic: dict[str, float] = {"frequency": ref.frequency}
    if not radial and ref.center:
        harmonic["center"] = ref.center
    terms: list[dict] = [{"harmonic": harmonic}]
    if ref.v_min:
        terms.append({"polynomial": {"coefficients": {0: ref.v_min}}})
    return Well.from_terms(terms, well.units, well.mass)


def has_term_orders(well: Well) -> bool:
    """Whether some term of the well carries a perturbation order other than 1."""
    return any(t.order != 1 for t in well.terms)


def check_term_orders(well: Well, channel: Channel) -> None:
    """A coupling scan of a well with term orders follows H_ref + Σ_k λ^k W_k, the series' own
    path; refuse what that path cannot be (as :func:`anharmony.series.series` does)."""
    if not has_term_orders(well):
        return
    if channel.dimension == 1 and channel.l is not None:
        for k, part in well.by_order().items():
            if not part.is_symmetric(0.0):
                raise InputError(
                    f"l: the terms at perturbation order {k} are not symmetric about x = 0, "
                    "so the parity channels do not decouple at every lambda; use l=None")


def coupled_well(well: Well, lam: float, reference: Reference, radial: bool) -> Well:
    """The well (1 − λ) V_ref + Σ_k λ^k V_k of the coupling path, as terms of the same kinds.

    An inverse-square term of a radial channel stays whole at every λ: the channel absorbs it
    into its basis, so it belongs to H_ref, as in :func:`anharmony.series.series`.

    V_k are the terms at perturbation order k (:attr:`~anharmony.terms.base.Term.order`,
    default 1): with every term at first order this is λ V + (1 − λ) V_ref, the well of
    H_ref + λ (H − H_ref); with orders it is the well of the series' H_ref + Σ_k λ^k W_k
    (W₁ = V₁ − V_ref, W_k = V_k), so λ = 1 is the physical well either way. The terms of the
    result are at first order (it is one well, not a series).

    ``radial`` is True for central wells and 1D parity channels (V_ref centred at 0).

    Raises
    ------
    InputError
        For a term whose potential is not proportional to one of its parameters (a formula):
        scan one of its parameters instead.
    """
    if lam == 1.0:
        return well
    units, mass = well.units, well.mass
    terms: list[Any] = []
    for t in well.terms:
        if radial and t.inverse_square is not None:
            terms.append(t)  # absorbed into the basis: part of H_ref, as in the series
    if lam != 0.0:
        for t in well.terms:
            if radial and t.inverse_square is not None:
                continue
            f = lam ** t.order
            if t.kind in ("harmonic", "polynomial"):
                poly = t.polynomial() or {}
                terms.append(Well.from_terms([{"polynomial": {
                    "coefficients": {p: f * v for p, v in poly.items()},
                    "center": t.center}}], units, mass).terms[0])
            elif t.kind in SCALED:
                name = SCALED[t.kind]
                terms.append(dataclasses.replace(t, **{name: f * getattr(t, name), "order": 1}))
            else:
                raise InputError(f"scan: coupling: the {t.kind} term cannot be scaled by "
                                 "lambda as a well; scan one of its parameters")
    k = reference.frequency ** 2 / (2.0 * units.hbar2_over_2m(mass))  # m ω² from ħω
    coeffs = {p: v for p, v in ((0, (1.0 - lam) * reference.v_min), (2, (1.0 - lam) * 0.5 * k))
              if v != 0.0}
    if coeffs:
        terms.append(Well.from_terms([{"polynomial": {
            "coefficients": coeffs, "center": 0.0 if radial else reference.center}}],
            units, mass).terms[0])
    return Well.from_terms(terms, units, mass)


def polynomial_thresholds(well: Well, ref: Reference, channel: Channel,
                           lams: np.ndarray) -> np.ndarray | None:
    """Thresholds of (1 − λ) V_ref + Σ λ^k V_k at every λ from the leading power of the
    polynomial on each side, when every central term is a polynomial (else None): what
    :meth:`Well.threshold` gives, without building a well per value."""
    radial = channel.l is not None
    polys = {}
    for order, part in well.by_order().items():
        poly = part.polynomial()
        if poly is None:
            return None
        polys[order] = poly
    k = ref.frequency ** 2 / (2.0 * well.units.hbar2_over_2m(well.mass))
    degree = max([2, *(p for poly in polys.values() for p in poly)])
    coeffs = np.zeros((len(lams), degree + 1))
    coeffs[:, 0] += (1.0 - lams) * ref.v_min  # the centre shifts no leading power
    coeffs[:, 2] += (1.0 - lams) * 0.5 * k
    for order, poly in polys.items():
        for p, c in poly.items():
            coeffs[:, p] += lams**order * c
    out = np.empty(len(lams))
    for i, row in enumerate(coeffs):
        nz = np.flatnonzero(row)
        d = int(nz[-1]) if nz.size else 0
        lead = float(row[d])
        if d == 0:
            out[i] = lead
            continue
        hi = math.copysign(math.inf, lead)
        lo = math.copysign(math.inf, lead * (-1) ** d)
        out[i] = hi if radial else min(lo, hi)
    return out


def path_threshold(well: Well, thr: float, lam: float, ref: Reference,
                        channel: Channel) -> float:
    """Threshold of the coupling path's well at λ: from the physical well's ``thr`` alone
    when every term is at first order (:func:`~anharmony.pencil.coupling_threshold`); with
    term orders, that of the well (1 − λ) V_ref + Σ λ^k V_k where it can be made of terms,
    else the first-order rule."""
    if lam == 1.0 or not has_term_orders(well):
        return coupling_threshold(thr, lam)
    radial = channel.l is not None
    try:
        w = coupled_well(well, lam, ref, radial)
    except InputError:  # a formula term: the rule of the first-order path
        return coupling_threshold(thr, lam)
    return float(w.threshold(channel.dimension, symmetric=radial))
