"""``anharmony plot``: one figure of a result file."""

from __future__ import annotations

import argparse

from ._common import EXIT_BAD_INPUT, EXIT_FAILED, EXIT_OK, say

__all__ = ["cmd_plot"]


def cmd_plot(args: argparse.Namespace) -> int:
    try:
        from .. import plots  # the figures live in their own optional module
    except ImportError as exc:
        say(f"plot: figures are not available in this installation ({exc})")
        return EXIT_FAILED
    make, save = getattr(plots, "make_figure", None), getattr(plots, "save_figure", None)
    if make is None or save is None:
        say("plot: anharmony.plots has no make_figure/save_figure")
        return EXIT_FAILED
    from ..store import ResultFileError, read_dataset

    try:
        ds = read_dataset(args.result)
    except ResultFileError as exc:
        say(str(exc))
        return EXIT_BAD_INPUT
    try:
        channel = args.channel[0] if args.channel and len(args.channel) == 1 else args.channel
        fig = make(ds, args.kind, channel=channel, scan_index=args.scan, levels=args.levels,
                   orders=args.orders, methods=args.methods, log=args.log,
                   basis_size=args.basis_size, size=tuple(args.size) if args.size else None,
                   title=args.title)
        path = save(fig, args.output, dpi=args.dpi)
    except (ValueError, KeyError, IndexError) as exc:
        say(f"plot: {exc}")
        return EXIT_BAD_INPUT
    except OSError as exc:
        say(f"plot: cannot write {args.output} ({exc.strerror or exc})")
        return EXIT_BAD_INPUT
    print(f"wrote {path}")
    return EXIT_OK
