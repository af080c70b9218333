"""The catalog of published inequalities (``catalog/*.yaml``).

Each entry has a name, the text of the inequality in the trade's notation,
the party names that text uses, words, and its published source.  An entry
is applied to a theory's scenario by name; its relabelled versions come from
:func:`nogo.symmetry.orbit`.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path

from .errors import InputError, Where, suggest
from .inequality import Inequality, parse_inequality
from .scenario import Scenario, check_keys
from .yamlread import read_yaml_file

_KEYS = {"name", "says", "source", "parties", "expression", "known"}


@dataclass(frozen=True)
class CatalogEntry:
    name: str
    expression: str
    source: str
    says: str
    parties: tuple[str, ...]
    file: str
    line: int | None
    known: tuple[dict, ...] = ()

    def inequality(self, scenario: Scenario) -> Inequality:
        missing = [p for p in self.parties if p not in scenario.party_names]
        if missing or len(self.parties) != len(scenario.parties):
            raise InputError(
                f"catalog entry '{self.name}' is written for parties {list(self.parties)}; "
                f"the scenario has {list(scenario.party_names)}", Where(self.file, self.line),
                "choose an entry written for this scenario's parties")
        for p in scenario.parties:
            if p.outcomes != ("+1", "-1"):
                raise InputError(
                    f"catalog entry '{self.name}' is written for outcomes +1, -1 (in that order); party '{p.name}' "
                    f"has {list(p.outcomes)}", Where(self.file, self.line),
                    "relabel the scenario's outcomes as [+1, -1] or write the inequality out with its own labels")
        return parse_inequality(scenario, self.expression, self.name, self.source, Where(self.file, self.line, "expression"))


def catalog_dir() -> Path:
    """The catalog folder: $NOGO_CATALOG, else the shipped one (package data, or the source tree's)."""
    env = os.environ.get("NOGO_CATALOG")
    if env:
        return Path(env)
    from .shipped import shipped_dir  # noqa: PLC0415

    return shipped_dir("catalog") or Path(__file__).resolve().parent.parent / "catalog"


def _entries_from_file(path: Path) -> list[CatalogEntry]:
    data = read_yaml_file(path)
    out = []
    for raw in (data if isinstance(data, list) else [data]):
        if not isinstance(raw, dict):
            raise InputError("a catalog entry is a mapping", Where(str(path)))
        check_keys(raw, _KEYS, "")
        for req in ("name", "expression", "source", "parties"):
            if req not in raw:
                raise InputError(f"catalog entry has no '{req}'", raw.where(None))
        out.append(CatalogEntry(str(raw["name"]), str(raw["expression"]), str(raw["source"]),
                                str(raw.get("says", "")), tuple(str(p) for p in raw["parties"]), str(path),
                                raw.line, tuple(raw.get("known") or ())))
    return out


def load_catalog(folder: str | Path | None = None) -> dict[str, CatalogEntry]:
    folder = Path(folder) if folder else catalog_dir()
    out: dict[str, CatalogEntry] = {}
    for path in sorted(folder.glob("*.yaml")):
        for entry in _entries_from_file(path):
            if entry.name in out:
                raise InputError(f"catalog entry '{entry.name}' is defined twice", Where(entry.file, entry.line))
            out[entry.name] = entry
    return out


def resolve_inequality(scenario: Scenario, spec: str, catalog: dict[str, CatalogEntry] | None = None) -> Inequality:
    """A catalog name (case-insensitive), an inline expression, or a YAML file with one entry."""
    catalog = load_catalog() if catalog is None else catalog
    by_lower = {k.lower(): v for k, v in catalog.items()}
    if spec.lower() in by_lower:
        return by_lower[spec.lower()].inequality(scenario)
    looks_written = any(t in spec for t in ("<=", ">=", "≤", "≥", "(", "<", "⟨"))
    if looks_written and not spec.endswith((".yaml", ".yml")):
        return parse_inequality(scenario, spec, "", "", Where("command line", key="inequality"))
    p = Path(spec)
    if p.suffix in (".yaml", ".yml") and p.exists():
        return load_catalog_file(p).inequality(scenario)
    raise InputError(f"'{spec}' is neither a catalog entry nor an inequality", Where("command line", key="inequality"),
                     suggest(spec, catalog) or "write it out, e.g. '<A1 B1> + <A1 B2> + <A2 B1> - <A2 B2> <= 2'")


def load_catalog_file(path: Path) -> CatalogEntry:
    entries = _entries_from_file(path)
    if len(entries) != 1:
        raise InputError("the file must hold exactly one inequality", Where(str(path)))
    return entries[0]
