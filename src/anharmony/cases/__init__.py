"""Case files (DESIGN §4): safe YAML loading, the schema, one message style, tasks.

A case file is read with :class:`StrictLoader` (``1e-3`` is a number, duplicate keys are
errors), checked against the pydantic schema :class:`CaseModel` (unknown keys forbidden,
numbers strict, each term built by the registry of :mod:`anharmony.terms`) and then by the
cross-field checks. Every problem of every file is raised at once as a :class:`CaseError`, one
line per problem: ``file:line:col: field.path: message``.

Modules: :mod:`.loader` (YAML with positions), :mod:`.messages` (the message style),
:mod:`.schema` (pydantic models), :mod:`.crossfield` (checks across fields), :mod:`.case`
(a validated case), :mod:`.files` (loading), :mod:`.tasks` (what a case asks for). This
package imports PyYAML and pydantic; nothing in the numerical core imports it.
"""

from __future__ import annotations

from ..errors import CaseError
from .case import LINEAR_PARAMETERS, Case, ChannelSpec, ScanTarget
from .files import case_from_dict, load_case, load_cases
from .loader import StrictLoader, parse_yaml
from .messages import Issue
from .schema import CaseModel, Convergence, ReferenceSpec
from .tasks import (
    Task,
    WorkEstimate,
    estimate_work,
    expand,
    resolve_length,
    resolve_reference,
)

Problem = Issue  # the former name; runner.py and others import it

CASE_SCHEMA = 1  # version of the case-file schema this package reads

__all__ = [
    "CASE_SCHEMA",
    "LINEAR_PARAMETERS",
    "Case",
    "CaseError",
    "CaseModel",
    "ChannelSpec",
    "Convergence",
    "Issue",
    "Problem",
    "ReferenceSpec",
    "ScanTarget",
    "StrictLoader",
    "Task",
    "WorkEstimate",
    "case_from_dict",
    "estimate_work",
    "expand",
    "load_case",
    "load_cases",
    "parse_yaml",
    "resolve_length",
    "resolve_reference",
]
