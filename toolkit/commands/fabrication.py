"""Subcommands drill, plate, washers, materials."""
