"""Subcommands of the ``confirm`` command line, one module each.

Each module defines ``register(subparsers, parents)`` which adds its parser
and sets ``handler`` to a function ``(args) -> int`` returning the exit code.
"""
