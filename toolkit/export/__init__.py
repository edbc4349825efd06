"""The export step: a finished work order (or a planner batch of them) to files on disk.

The format modules draw one file each (:mod:`toolkit.export.pdf`, :mod:`toolkit.export.xlsx`);
:mod:`toolkit.export.files` is the one module that decides which files an order or a batch gets, what they
are called, and writes them through :mod:`toolkit.fileio` (atomically, never over an existing file without
``force``). The command line calls it, so a library user gets exactly the files the command writes.
"""

__all__ = ["files"]
