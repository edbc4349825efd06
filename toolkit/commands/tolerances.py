"""Subcommands grades, tolerance, verify."""
