"""Argument helpers shared by the subcommands."""

from __future__ import annotations

import json
import sys
from typing import Any

from ..theory import Theory, load_theory


def add_theory(p, bundle: bool = True) -> None:
    p.add_argument("theory", help="theory file (YAML)")
    if bundle:
        p.add_argument("bundle", help="bundle name, or assumption names joined by '+'")


def add_output(p) -> None:
    p.add_argument("--json", action="store_true", help="print one JSON object")


def theory_of(args) -> Theory:
    return load_theory(args.theory)


def emit_json(obj: Any) -> None:
    json.dump(obj, sys.stdout, indent=2, ensure_ascii=False)
    sys.stdout.write("\n")
