"""One atom in a vertical focused-beam trap, with gravity along the beam: levels by symmetry.

An invented scenario: an atom of mass 40 u held at the focus of a Gaussian beam pointing up
(waist 1.0 µm, wavelength 1.064 µm, depth U₀/h = 200 kHz), gravity pulling along the beam
axis. The well is not central, but it is symmetric about the beam axis, so it is solved in the
axial basis; gravity breaks z → −z, so the blocks are Λ alone (no parity). Trap units:
energies E/h in kHz, lengths in µm, masses in u.

Run: python examples/beam_trap.py
"""

# Model results for an idealised potential, not a basis for building or operating
# hardware: see the caution in the README and follow local regulations and safety rules.

from scipy import constants as sc

import anharmony as ah

MASS = 40.0  # u
U = sc.physical_constants["atomic mass constant"][0]
# m g as a force in (h·kHz)/µm: the tilt term's unit in the trap system
GRAVITY = MASS * U * sc.g * sc.micro / (sc.h * 1e3)

beam = {"focused_beam": {"depth": 200.0, "waist": 1.0, "wavelength": 1.064}}
well = ah.Well.from_terms([beam, {"tilt": {"force": GRAVITY, "axis": "z"}}], units="trap",
                          mass=MASS)

tf = ah.trap_frequencies(well, units="trap", mass=MASS)
print(f"atom of {MASS:g} u in a 200 h·kHz focused beam, gravity m g = {GRAVITY:.4f} h·kHz/µm")
print("trap frequencies (h·kHz): " + ", ".join(f"{f:.4f}" for f in tf.frequencies))
print(f"minimum at z = {tf.minimum[2] * 1e3:.2f} nm (gravity sag), V = {tf.value:.4f} h·kHz")

spec = ah.solve(well, geometry="axial", shells=24, truncation="energy", units="trap",
                mass=MASS, levels=8)
print(f"{'level':>12} {'E/h (kHz)':>12} {'above ground':>13} {'error est.':>11}")
for label, e, err in zip(spec.labels, spec.energies, spec.error_estimate, strict=True):
    print(f"{label:>12} {e:12.4f} {e - spec.energies[0]:13.4f} {err:11.1e}")
