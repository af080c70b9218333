"""Subcommands of ``nogo``: one module each, each with ``register(subparsers)``."""
