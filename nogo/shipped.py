"""Where the shipped data lives: the catalog of inequalities and the theory files.

In a source tree they are the folders ``catalog/`` and ``theories/`` at the
repository root.  An installed wheel carries them as package data
(``nogo/_data/catalog``, ``nogo/_data/theories``; ``setup.py`` maps the
root folders there at build time), so they are found from any working
directory.
"""

from __future__ import annotations

import importlib.util
from pathlib import Path

KINDS = ("catalog", "theories")


def shipped_dir(kind: str) -> Path | None:
    """The folder of shipped ``kind`` ("catalog" or "theories"), or None when there is none.

    A source tree (the package's parent folder holds nogo's pyproject.toml)
    uses its own folders, so that edits there are seen at once; otherwise the
    package data of the installed wheel.
    """
    if kind not in KINDS:
        raise ValueError(kind)
    root = Path(__file__).resolve().parent.parent
    if (root / kind).is_dir() and (root / "pyproject.toml").is_file():
        return root / kind
    try:
        spec = importlib.util.find_spec(f"nogo._data.{kind}")
    except (ImportError, ValueError):
        spec = None
    for loc in (spec.submodule_search_locations or []) if spec else []:
        p = Path(loc)
        if p.is_dir() and any(p.glob("*.yaml")):
            return p
    return None


def shipped_theory(name: str) -> Path | None:
    """A shipped theory file for ``name`` ("bell-2x2", "bell-2x2.yaml" or "theories/bell-2x2.yaml")."""
    folder = shipped_dir("theories")
    if folder is None:
        return None
    stem = Path(name).name
    for cand in (stem, stem + ".yaml"):
        p = folder / cand
        if p.is_file() and p.suffix in (".yaml", ".yml"):
            return p
    return None


def shipped_theory_names() -> list[str]:
    folder = shipped_dir("theories")
    return sorted(p.stem for p in folder.glob("*.yaml")) if folder else []
