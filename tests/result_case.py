"""A small Woods–Saxon + spin–orbit case whose result file holds every kind of variable (a
scan, a series with Padé values, a convergence study): shared by the result-file tests."""

TEMPLATE = """\
schema: 1
title: {title}
units: nuclear
space: {{dimension: 3, l: [0, 1], spin: 1/2}}
well:
  - woods_saxon: {{depth: 50.0, radius: 3.5, diffuseness: 0.6}}
  - spin_orbit: {{strength: 20.0, radius: 3.5, diffuseness: 0.6}}
reference: {{frequency: 14.0}}
basis: {{size: 10}}
levels: {{count: 2}}
scan:
  parameter: well[0].depth
  values: [45.0, 50.0]
perturbation: {{orders: 3, exact: false, resum: [pade]}}
convergence: {{sizes: [6, 8], tolerance: 1.0e-3, estimate: smaller_basis}}
output: {output}
"""


def result_case(title: str, output: str) -> str:
    """The case text with its title and output file."""
    return TEMPLATE.format(title=title, output=output)
