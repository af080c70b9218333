"""Argument helpers shared by the subcommands."""

from __future__ import annotations

import json
import sys
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from ..theory import Theory


def add_theory(p, bundle: bool = True) -> None:
    p.add_argument("theory", help="theory file (YAML)")
    if bundle:
        p.add_argument("bundle", help="bundle name, or assumption names joined by '+'")


def add_output(p) -> None:
    p.add_argument("--json", action="store_true", help="print one JSON object")


def add_match(p) -> None:
    p.add_argument("--match", metavar="PAIRS",
                   help="read a catalog entry's parties and outcomes as given, e.g. 'A=Bob,B=Alice,+1=0,-1=1' "
                        "(default: by name where the names agree, else by position)")


def console(stderr: bool = False):
    """A rich console that writes plain text without wrapping when the output is not a terminal."""
    from rich.console import Console

    stream = sys.stderr if stderr else sys.stdout
    if stream.isatty():
        return Console(highlight=False, stderr=stderr)
    return Console(highlight=False, stderr=stderr, width=100_000, no_color=True, color_system=None,
                   soft_wrap=True)


def shown_path(path: str | None) -> str | None:
    """A path as a person reads it: relative to here when inside, without '..' detours."""
    import os

    if not path:
        return path
    full = os.path.normpath(os.path.abspath(path))
    rel = os.path.relpath(full)
    return rel if not rel.startswith("..") else full


def theory_of(args) -> "Theory":
    from ..theory import load_theory

    return load_theory(args.theory)


def emit_json(obj: Any) -> None:
    json.dump(obj, sys.stdout, indent=2, ensure_ascii=False)
    sys.stdout.write("\n")
