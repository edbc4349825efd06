"""Subcommands solve, split."""
