"""Referee reports: a file of claims in, a verdict per claim with evidence out.

Flow (one direction, one module per stage)::

    claims file (YAML)      claims.py    Claim dataclasses, every name checked with its line
      -> verdicts           decide.py    one function per claim kind, built on the public
                            sets.py      functions of the other stages (check, minimal, facets,
                            patterns.py  quantum, possibilistic); evidence records in the
                            quantum.py   plain-data layout of evidence.py
      -> report             render.py    terminal table, JSON, Markdown, LaTeX, HTML
      -> evidence bundle    evidence.py  one JSON file per claim, copies of the declarations,
                                         a content hash per file and for the bundle
    evidence bundle -> checker.py  (``nogo recheck``): exact rational arithmetic only; it
                                   rebuilds the rows from the copied theory files with its own
                                   compiler (rows.py), never imports an LP/SAT/SMT/SDP solver.

This package's ``__init__`` imports nothing, so that the checker's modules load
without the deciding stages (and their solvers).
"""
