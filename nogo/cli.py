"""The ``nogo`` command line.

Each subcommand lives in its own module under :mod:`nogo.commands` and
exposes ``register(subparsers)``; this file only discovers them, parses and
maps errors to exit status 2 without a traceback.  Exit status: 0 for a
positive answer (implied, consistent, confirmed), 1 for a negative one, 2 for
bad input or an error.
"""

from __future__ import annotations

import argparse
import importlib
import os
import pkgutil
import sys

from .errors import InputError


def build_parser() -> argparse.ArgumentParser:
    from . import commands

    parser = argparse.ArgumentParser(
        prog="nogo",
        description="Decide, derive and check no-go theorems from declared scenarios and assumptions.")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for info in sorted(pkgutil.iter_modules(commands.__path__), key=lambda m: m.name):
        if info.name.startswith("_"):
            continue
        mod = importlib.import_module(f"{commands.__name__}.{info.name}")
        mod.register(sub)
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "run", None):
        parser.print_help()
        return 2
    try:
        return int(args.run(args) or 0)
    except InputError as exc:
        print(f"nogo: error: {exc}", file=sys.stderr)
        return 2
    except BrokenPipeError:
        # the reader went away (e.g. `nogo check ... | head`): not an error of ours; stay quiet
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return 2
    except KeyboardInterrupt:
        print("nogo: interrupted", file=sys.stderr)
        return 2
    except Exception as exc:  # noqa: BLE001 - a user sees one line, developers set NOGO_DEBUG
        if os.environ.get("NOGO_DEBUG"):
            raise
        print(f"nogo: internal error: {type(exc).__name__}: {exc} (set NOGO_DEBUG=1 for details)", file=sys.stderr)
        return 2


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
