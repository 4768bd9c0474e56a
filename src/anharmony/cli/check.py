"""``anharmony check``: validate, describe, estimate the work, and refuse what run would."""

from __future__ import annotations

import argparse

from ._common import EXIT_BAD_INPUT, EXIT_OK, problems, say

__all__ = ["cmd_check"]


def cmd_check(args: argparse.Namespace) -> int:
    from ..cases import CaseError, estimate_work, load_cases
    from ..runner import describe, preflight
    from ..runner.preflight import WORK_LIMIT_SECONDS

    try:
        cases = load_cases(args.cases)
    except CaseError as exc:
        return problems(exc)
    status = EXIT_OK
    for case in cases:
        text = describe(case, reference=not args.no_reference)
        for line in text.lines:
            print(line)
        print(f"  estimated work: {estimate_work(case).summary()}")
        found = preflight(case, numbers=not args.no_reference,
                          work_limit=None if args.allow_long else WORK_LIMIT_SECONDS)
        for issue in found:
            say(str(issue))
        if found:
            status = EXIT_BAD_INPUT
    return status
