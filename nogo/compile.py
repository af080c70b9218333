"""Compile a bundle: the plain linear model, or the mixture model when needed.

The stages live in their own modules, imported in one direction:

* :mod:`nogo.events` — present events, read-out rules, the rule of projection;
* :mod:`nogo.linear` — the array compiler for linear kinds (``compile_linear``);
* :mod:`nogo.mixture` — hidden-variable bundles (``compile_mixture``), which
  uses the two above and never this module.

This module only dispatches, and keeps the old names importable.
"""

from __future__ import annotations

from .events import Projected, hub_settings, present_events, project_independence, read_out_ok
from .linear import NotLinear, compile_linear
from .model import LinearModel
from .theory import Theory

__all__ = ["NotLinear", "Projected", "compile_bundle", "compile_linear", "hub_settings",
           "present_events", "project_independence", "read_out_ok"]


def compile_bundle(theory: Theory, spec: str | list[str], **options) -> LinearModel:
    """Compile any bundle: the plain linear model, or the mixture model when needed."""
    from .sizes import guard_bundle  # noqa: PLC0415 - size guard from the declaration, before anything is built
    guard_bundle(theory, spec, **options)
    try:
        return compile_linear(theory, spec)
    except NotLinear:
        from .mixture import compile_mixture  # noqa: PLC0415 - heavy optional stage

        return compile_mixture(theory, spec, **options)
