"""Subcommands of the ``counterpoise`` command line, one module per group.

Each module defines ``configure_<name>(parser)`` for each of its subcommands; it adds the options and sets
``parser.set_defaults(run=...)``. Nothing heavy is imported at module level (see ``toolkit.cli``).
"""
