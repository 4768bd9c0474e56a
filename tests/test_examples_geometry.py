"""The geometry examples run and print what outside formulas say."""

import math
import re
import runpy
from pathlib import Path

import pytest
from scipy import constants as sc

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
RTOL_HESSIAN = 1e-6  # trap_frequencies' Richardson Hessian, printed to 4 decimals of ~10 kHz


def _run(name, capsys):
    runpy.run_path(str(EXAMPLES / name), run_name="__main__")
    return capsys.readouterr().out


def _numbers(line):
    """The decimal numbers of a printed line, after its label (up to ':' or the first '=')."""
    return [float(x) for x in re.findall(r"-?\d+\.\d+", re.split(r"[:=]", line, maxsplit=1)[1])]


def test_beam_trap_prints_the_focused_beam_frequencies(capsys):
    out = _run("beam_trap.py", capsys)
    freqs = _numbers(next(l for l in out.splitlines() if l.startswith("trap frequencies")))
    # ω_⊥ = sqrt(4U₀/(m w₀²)), ω_z = sqrt(2U₀/(m z_R²)), z_R = π w₀²/λ: Grimm, Weidemüller &
    # Ovchinnikov, Adv. At. Mol. Opt. Phys. 42, 95 (2000); gravity only shifts the minimum by
    # ~20 nm, changing them by (sag/z_R)² ~ 1e-4 relative at most
    m = 40.0 * sc.physical_constants["atomic mass constant"][0]
    u0, w0, lam = 200.0e3 * sc.h, 1.0e-6, 1.064e-6
    z_r = math.pi * w0**2 / lam
    khz = [math.sqrt(2 * u0 / (m * z_r**2)) / (2e3 * math.pi),
           math.sqrt(4 * u0 / (m * w0**2)) / (2e3 * math.pi)]
    assert freqs[0] == pytest.approx(khz[0], rel=2e-4)
    assert freqs[1] == pytest.approx(khz[1], rel=2e-4) and freqs[2] == freqs[1]
    sag = _numbers(next(l for l in out.splitlines() if l.startswith("minimum")))[0]
    # harmonic sag g/ω_z² (textbook), in nm; anharmonicity of the beam adds ~1e-3 relative
    assert sag == pytest.approx(-sc.g / (2e3 * math.pi * khz[0])**2 * 1e9, rel=1e-2)


def test_elliptical_dot_ground_level_is_raised_by_the_quartic(capsys):
    out = _run("elliptical_dot.py", capsys)
    rows = [l.split() for l in out.splitlines() if re.match(r"\s*\(\d", l)]
    # ħω_x/2 + ħω_y/2 = 3.75 meV is the harmonic ground level (textbook); a positive r⁴ term
    # raises every level (Hellmann–Feynman / variational bound, textbook)
    assert float(rows[0][3]) == pytest.approx(3.75, rel=1e-12)
    assert len(rows) == 8 and all(float(r[2]) > float(r[3]) for r in rows)
