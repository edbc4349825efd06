"""Subcommands demo, order, batch."""
