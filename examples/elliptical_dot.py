"""An elliptical quantum dot: 2D anisotropic harmonic confinement with a quartic correction.

An invented scenario: an electron of effective mass 0.067 m_e (the GaAs conduction-band
value, common practice) in a dot squeezed along y — ħω_x = 3.0 meV, ħω_y = 4.5 meV — whose
bottom is flattened by a central quartic term 4e-7 meV/nm⁴ · r⁴. Neither term is central
together, so the levels come from the 2D Cartesian basis, in blocks of the two reflection
parities. Dot units: meV, nm, electron masses.

Run: python examples/elliptical_dot.py
"""

# Model results for an idealised potential, not a basis for building or operating
# hardware: see the caution in the README and follow local regulations and safety rules.

import anharmony as ah

MASS = 0.067
well = ah.Well.from_terms([{"anisotropic_harmonic": {"frequencies": [3.0, 4.5]}},
                           {"power": {"exponent": 4, "strength": 4.0e-7}}],
                          units="dot", mass=MASS)

tf = ah.trap_frequencies(well, 2, units="dot", mass=MASS)
print("elliptical GaAs dot, ħω = 3.0 and 4.5 meV, + 4e-7 meV/nm^4 r^4")
print("harmonic frequencies at the bottom (meV): "
      + ", ".join(f"{f:.4f}" for f in tf.frequencies))
spec = ah.solve(well, 2, geometry="cartesian", shells=24, units="dot", mass=MASS, levels=8)
harmonic = ah.solve(ah.Well.from_terms(well.terms[:1], units="dot", mass=MASS), 2,
                    geometry="cartesian", shells=24, units="dot", mass=MASS, levels=8)
print(f"{'(nx,ny)':>8} {'parity':>8} {'E (meV)':>11} {'harmonic':>9} {'shift':>9} "
      f"{'error est.':>10}")
for k, label in enumerate(spec.labels):
    px, py = ("+" if p == 0 else "-" for p in spec.blocks[k])
    print(f"{label:>8} {px + py:>8} {spec.energies[k]:11.6f} {harmonic.energies[k]:9.4f} "
          f"{spec.energies[k] - harmonic.energies[k]:+9.6f} {spec.error_estimate[k]:10.1e}")
