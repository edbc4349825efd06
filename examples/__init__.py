"""Invented example files (job files and a planner sheet), shipped in the wheel as ``toolkit.examples`` so
that a user without the source tree can write editable copies (see ``toolkit.workorder.build.write_examples``).
"""
