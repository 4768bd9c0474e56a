"""Print the lowest levels of a quartic-corrected 3D oscillator, channel by channel.

Run: python examples/levels.py
"""

import anharmony as ah

well = ah.Well.from_terms([{"harmonic": {"frequency": 1.0}},
                           {"power": {"exponent": 4, "strength": 0.05}}])
print("3D oscillator + 0.05 r^4, oscillator units (energies in hbar*omega)")
print(f"{'level':>7} {'energy':>16} {'oscillator':>11} {'shift':>13}")
for l in range(4):
    spec = ah.solve(well, dimension=3, l=l, size=40, levels=3)
    for n, (e, e0) in enumerate(zip(spec.energies, spec.reference_energies, strict=True)):
        print(f"{spec.channel.level_label(n):>7} {e:16.12f} {e0:11.4f} {e - e0:+13.10f}")
