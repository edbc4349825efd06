"""The export step: a finished work order (or a planner batch of them), and the register's certificate and
statistics, to files.

One module per format: :mod:`toolkit.export.pdf` (the work order's content; its page writer with the
embedded fonts in :mod:`toolkit.export.pdfpage`, its polar diagrams laid out by
:mod:`toolkit.export.diagram`), :mod:`toolkit.export.xlsx` (the workbook), :mod:`toolkit.export.svg` (the
same diagrams for the browser), :mod:`toolkit.export.certificate` and :mod:`toolkit.export.statistics`
(the register's documents, on the flowing pages of :mod:`toolkit.export.reportpage`).
:mod:`toolkit.export.files` is the one module that decides which files an order or a batch gets, what they
are called, and writes them through :mod:`toolkit.fileio` (atomically, never over an existing file without
``force``). The command line calls it, so a library user gets exactly the files the command writes.
"""

__all__ = ["files", "pdf", "pdfpage", "diagram", "xlsx", "svg", "certificate", "statistics", "reportpage"]
