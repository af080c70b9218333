"""``python -m nogo.referee DIR``: the evidence checker on its own, without loading any other command.

The same as ``nogo recheck DIR``; this entry point loads only the checker's
modules (the ``nogo`` command line registers every subcommand, and some of
them import solver libraries when registered).
"""

from __future__ import annotations

import argparse
import sys


def main(argv: list[str] | None = None) -> int:
    from ..commands import recheck
    from ..errors import InputError

    parser = argparse.ArgumentParser(prog="python -m nogo.referee")
    sub = parser.add_subparsers(dest="command")
    recheck.register(sub)
    args = parser.parse_args(["recheck"] + list(sys.argv[1:] if argv is None else argv))
    try:
        return args.run(args)
    except InputError as exc:
        print(f"nogo: error: {exc}", file=sys.stderr)
        return 2


if __name__ == "__main__":
    sys.exit(main())
