"""The calculator forms' field groups: the common case first, the less common options in groups of our
own that fold away (an HTML ``<details>`` element) and open by themselves when one of their fields has a
problem or holds a value other than the example's, so nothing typed is ever hidden or lost (a folded group
is still sent with the form)."""

from __future__ import annotations

__all__ = ["GROUPS", "form_groups"]

#: Per page: (title, note, field names) of each folding group; fields not named stay in the common part.
GROUPS = {
    "tolerance": (
        ("Allocation to the planes and rules",
         "How the allowance is shared between the bearings and carried to the correction planes; leave empty "
         "for the usual lever rule.",
         ("custom_grade", "criterion", "journal_load", "static_share", "min_share", "one_plane_rule",
          "show_other_rule", "rotor_length", "correction_diameter")),
        ("Check a measured residual",
         "Measured residuals per plane, checked against the allowance, with an allowance for measuring error.",
         ("residual", "error_allowance", "check_stage")),
    ),
}


def form_groups(slug: str, fields, values: dict, example: dict, errors: dict) -> tuple[list, list[dict]]:
    """The common fields of page ``slug`` and its groups, each ``{"title", "note", "fields", "open"}``."""
    groups = GROUPS.get(slug, ())
    grouped = {name for _t, _n, names in groups for name in names}
    common = [f for f in fields if f.name not in grouped]
    out = []
    for title, note, names in groups:
        members = [f for f in fields if f.name in names]
        if not members:
            continue
        opened = any(f.name in errors or _own(f, values, example) for f in members)
        out.append({"title": title, "note": note, "fields": members, "open": opened})
    return common, out


def _own(f, values: dict, example: dict) -> bool:
    """Whether field ``f`` holds a value of the person's own: neither empty, nor the example's, nor the
    option's default (a choice is always sent with its default selected)."""
    value = str(values.get(f.name, "") or "").strip()
    return value not in ("", str(example.get(f.name, "") or "").strip(), str(getattr(f, "default", "") or "").strip())
