"""nogo: decide, derive and check no-go theorems from declared scenarios and assumptions.

For notebooks and scripts::

    import nogo
    th = nogo.load("theories/bell-2x2.yaml")
    th.check("Bell-local", "CHSH")          # exact verdict, shown as text / HTML / LaTeX

Everything heavy is imported on first use, so ``import nogo`` (and the
command line's ``--help``) stays fast.
"""

from __future__ import annotations

__all__ = ["load"]


def load(path):
    """Read a theory file; returns a :class:`nogo.api.TheoryHandle` with check, minimal, facets,
    compare, quantum and slice methods mirroring the commands."""
    from .api import load as _load

    return _load(path)
