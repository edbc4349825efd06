"""The tolerance of one rotor, per plane, by one or more criteria (ISO 21940-11, API 4W/N, MIL-STD-167-1), the
strictest marked, with the static/couple form and the residual checks.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Iterable, Mapping

import numpy as np

from toolkit.errors import BadInput, Worded
from toolkit.tolerance.allocation import (DEFAULT_MIN_SHARE, BearingAllocation, allocate_to_bearings, bounds_text,
                                          check_axial, check_min_share, transfer_mm)
from toolkit.tolerance.api import api_allowance, journal_lb
from toolkit.tolerance.boundary import G_MM, ISO_SOURCE, LEVER_SOURCE, STATICS
from toolkit.tolerance.check import ResidualCheck, check_residuals, named_pairs
from toolkit.tolerance.grades import Grade, parse_grade
from toolkit.tolerance.milstd import mil_std_167_allowance
from toolkit.tolerance.one_plane import ONE_PLANE_LENGTH_RATIO, ONE_PLANE_RULES, OnePlane, one_plane_allowance
from toolkit.tolerance.static_couple import StaticCouple, static_couple_allowance
from toolkit.tolerance.uper import permissible_unbalance, specific_unbalance
from toolkit.units import Q_, quantity, speed_rpm

CRITERIA = {
    "iso": ("ISO 21940-11", ISO_SOURCE + "; allocation " + LEVER_SOURCE),
    "api": ("API 4W/N", "API Std 617, 7th ed., Annex B"),
    "mil-std-167": ("MIL-STD-167-1", "MIL-STD-167-1 (1974), as reproduced in training notes [H]"),
}


# -- the report ------------------------------------------------------------------------------------

@dataclass(frozen=True)
class CriterionResult:
    """One criterion's allowances: per bearing plane and per reported plane."""

    name: str
    label: str
    method: str
    source: str
    planes: tuple[tuple[str, object], ...]  # (plane name, Quantity [g*mm])
    notes: tuple[str, ...] = ()

    def allowance(self, plane: str):
        return dict(self.planes)[plane]

    def to_dict(self, strictest: Mapping[str, str] | None = None) -> dict:
        strictest = strictest or {}
        return {"name": self.name, "label": self.label, "method": self.method, "source": self.source,
                "notes": list(self.notes),
                "planes": [{"name": p, "u_per_g_mm": u.m_as(G_MM), "u_per_oz_in": u.m_as("oz*in"),
                            "strictest": strictest.get(p) == self.name} for p, u in self.planes]}


@dataclass(frozen=True)
class PlaneAllowance:
    """The governing (strictest) allowance of one plane, with its method and source."""

    name: str
    u_per: object             # Quantity [g*mm]
    criterion: str
    method: str
    source: str
    position: object = None   # Quantity [mm] for a correction plane, None for a bearing plane
    by_criterion: tuple[tuple[str, object], ...] = ()

    def to_dict(self) -> dict:
        return {"name": self.name, "u_per_g_mm": self.u_per.m_as(G_MM), "u_per_oz_in": self.u_per.m_as("oz*in"),
                "criterion": self.criterion, "method": self.method, "source": self.source,
                "position_mm": None if self.position is None else float(self.position.m_as("mm")),
                "by_criterion": {c: u.m_as(G_MM) for c, u in self.by_criterion}}


@dataclass(frozen=True)
class ToleranceReport:
    """Everything the tolerance of one rotor needs: inputs, ISO U_per, per-plane allowances by each
    criterion with the strictest marked, optional static/couple form, residual checks and warnings."""

    grade: Grade
    mass: object
    speed_rpm: float
    e_per: object
    u_per: object
    bearing_span: object
    com_from_a: object
    bearings: BearingAllocation | None
    criteria: tuple[CriterionResult, ...]
    planes: tuple[PlaneAllowance, ...]
    static_couple: StaticCouple | None
    checks: tuple[ResidualCheck, ...]
    warnings: tuple[str, ...]
    method: str = f"U_per = 1000*G*m/Omega ({ISO_SOURCE})"
    source: str = ISO_SOURCE
    one_plane: OnePlane | None = None  # one correction plane: both rules, the one used, the doubts

    @property
    def passed(self) -> bool | None:
        """True/False when residuals were checked, else None."""
        return None if not self.checks else all(c.passed for c in self.checks)

    def allowances(self) -> dict:
        """Plane name -> governing allowance (Quantity [g*mm]); ``rotor`` is the whole-rotor ISO U_per."""
        out = {p.name: p.u_per for p in self.planes}
        out.setdefault("rotor", self.u_per)
        return out

    def to_dict(self) -> dict:
        strictest = {p.name: p.criterion for p in self.planes}
        return {
            "grade_mm_s": self.grade.mm_s, "grade": self.grade.label, "custom_grade": self.grade.custom,
            "grade_source": self.grade.source, "speed_rpm": self.speed_rpm,
            "mass_kg": float(self.mass.m_as("kg")), "mass_lb": float(self.mass.m_as("lb")),
            "e_per_um": self.e_per.m_as("um"), "u_per_g_mm": self.u_per.m_as(G_MM),
            "u_per_oz_in": self.u_per.m_as("oz*in"), "method": self.method, "source": self.source,
            "bearing_span_mm": None if self.bearing_span is None else float(self.bearing_span.m_as("mm")),
            "com_from_a_mm": None if self.com_from_a is None else float(self.com_from_a.m_as("mm")),
            "bearing_allocation": None if self.bearings is None else self.bearings.to_dict(),
            "planes": [p.to_dict() for p in self.planes],
            "criteria": [c.to_dict(strictest) for c in self.criteria],
            "static_couple": None if self.static_couple is None else self.static_couple.to_dict(),
            "one_plane": None if self.one_plane is None else self.one_plane.to_dict(),
            "checks": [c.to_dict() for c in self.checks], "passed": self.passed,
            "warnings": list(self.warnings),
        }


def tolerance_report(grade, mass, speed, *, custom_grade: bool = False, bearing_span=None, com_from_a=None,
                     planes=None, static_share: float | None = None, criteria: Iterable[str] = ("iso",),
                     journal_loads=None, min_share: float = DEFAULT_MIN_SHARE, residuals=None,
                     error_allowance=None, check_stage: str = "after-balancing", one_plane_rule: str = "whole",
                     rotor_length=None, correction_diameter=None,
                     one_plane_length_ratio: float = ONE_PLANE_LENGTH_RATIO) -> ToleranceReport:
    """The tolerance of one rotor, per plane, by one or more criteria, with optional residual checks.

    Whole rotor: U_per and e_per (ISO 21940-11:2016, 6.3.3). Bearing planes A and B: ISO by the bounded
    lever rule (geometry, or the journal loads' ratio, which equals L_B/L by statics [D]); API 4W/N from
    each journal load (or loads from the geometry by statics); MIL-STD-167-1 per plane with the rotor
    weight. Correction planes (``planes``, name -> position from bearing A towards B): each criterion's
    bearing-plane allowances transferred by statics (:func:`transfer_to_planes`). The strictest criterion
    per plane governs (``report.planes``). One correction plane: by ISO the whole U_per is its tolerance
    (``one_plane_rule="whole"``, default; ISO 21940-11:2016, 7.1 and 8.2 [H]) or, as a stricter option,
    the statics transfer (``"statics"``); ``report.one_plane`` has both values and the doubts about the
    one-plane conditions (see :func:`one_plane_allowance`; ``rotor_length`` and ``correction_diameter``
    feed its length check). With ``static_share`` (two planes), static and couple tolerances from the
    governing bearing-plane allowances, and they govern the plane allowances: each plane's allowance is
    the largest T with 2T within the static part and T(|z1 - z_s| + |z2 - z_s|)/b within the couple part
    per plane, so residuals within T in both planes keep both parts within their tolerances [D].

    Parameters: grade, mass [mass], speed [1/time] as in :func:`permissible_unbalance`; bearing_span,
    com_from_a : Quantity [length]; planes : mapping name -> position, or (name, position) pairs;
    journal_loads : mapping ``{"A": mass, "B": mass}`` or (name, mass) pairs; criteria : names from :data:`CRITERIA`;
    min_share : lever bound (default 0.3 [M]); residuals, error_allowance, check_stage : see
    :func:`check_residuals`.

    >>> r = tolerance_report("G6.3", "412 kg", "1480 rpm", bearing_span="900 mm", com_from_a="400 mm")
    >>> [(p.name, round(p.u_per.m_as("g*mm"))) for p in r.planes]
    [('A', 9304), ('B', 7443)]
    """
    g = parse_grade(grade, custom=custom_grade)
    m = quantity(mass, "mass", "mass", positive=True)
    n = float(speed_rpm(speed, "speed"))
    low = check_min_share(min_share)
    names = _criterion_names(criteria)
    u_per = permissible_unbalance(g, m, Q_(n, "rpm"))
    e_per = specific_unbalance(g, Q_(n, "rpm"))
    warnings: list[str] = []
    span, com = _geometry(bearing_span, com_from_a)
    loads = _journal_loads(journal_loads, m, warnings)
    plane_pairs, positions = _positions(planes, span)

    bearings, share_a, iso_method = _iso_shares(u_per, span, com, loads, low, warnings)
    at_bearings, methods, notes = _at_bearings(names, u_per.m_as(G_MM), share_a, iso_method,
                                               _journal_weights(loads, m, span, com), m, n)
    plane_names, per_criterion, suffix = _per_plane(at_bearings, plane_pairs, positions, span, loads,
                                                    static_share, warnings)
    one_plane = None
    if len(positions) == 1 and at_bearings.get("iso") is not None:
        ab = at_bearings["iso"]
        one_plane = one_plane_allowance(u_per, Q_(ab[0], G_MM), Q_(ab[1], G_MM), span, com, positions[0],
                                        rule=one_plane_rule, plane=plane_names[0], rotor_length=rotor_length,
                                        correction_diameter=correction_diameter,
                                        length_ratio=one_plane_length_ratio)
        per_criterion["iso"] = [one_plane.used.m_as(G_MM)]
    elif one_plane_rule not in ONE_PLANE_RULES:
        raise BadInput.about("one_plane_rule", f"{one_plane_rule!r} is not known; use {' or '.join(ONE_PLANE_RULES)}")

    results = _criterion_results(names, u_per, at_bearings, methods, notes, plane_names, per_criterion, suffix,
                                 one_plane)
    governing = _governing(names, results, plane_names, per_criterion, positions)
    sc = None
    if static_share is not None:
        if len(positions) != 2:
            raise BadInput.about("static_share", "needs two correction planes ({planes}, twice) and the "
                                                 "geometry", mentions=("planes",))
        ab = [at_bearings[k] for k in names]
        ua, ub = min(x[0] for x in ab), min(x[1] for x in ab)
        sc = static_couple_allowance(Q_(ua, G_MM), Q_(ub, G_MM), span, com, positions, static_share,
                                     names=tuple(plane_names))
        governing = _governed_by_static_couple(governing, sc, [p.m_as("mm") for p in positions],
                                               com.m_as("mm"))

    report = ToleranceReport(g, m, n, e_per, u_per, span, com, bearings, tuple(results), tuple(governing), sc,
                             (), tuple(warnings), one_plane=one_plane)
    if g.custom:
        report = _replace(report, warnings=report.warnings + (
            f"custom grade G {g.mm_s:g} mm/s: not a grade of the ISO 21940-11 series",))
    if residuals:
        checks = check_residuals(report.allowances(), residuals if isinstance(residuals, Mapping)
                                 else dict(named_pairs(residuals, "residuals")),
                                 error_allowance=error_allowance, stage=check_stage)
        report = _replace(report, checks=checks)
    return report


# -- the steps of tolerance_report, in order ------------------------------------------------------------

def _criterion_names(criteria) -> list[str]:
    """The criteria asked for, known names only, each once, in the order given."""
    names = []
    if isinstance(criteria, str):
        criteria = (criteria,)
    for c in criteria:
        key = str(c).strip().lower()
        if key not in CRITERIA:
            raise BadInput.about("criteria", f"{c!r} is not known; use {', '.join(CRITERIA)}")
        if key not in names:
            names.append(key)
    if not names:
        raise BadInput.about("criteria", f"none given; use {', '.join(CRITERIA)}")
    return names


def _geometry(bearing_span, com_from_a):
    """(span, centre of mass) as quantities, both or neither."""
    span = None if bearing_span is None else quantity(bearing_span, "length", "bearing_span", positive=True)
    com = None if com_from_a is None else quantity(com_from_a, "length", "com_from_a")
    if (span is None) != (com is None):
        raise BadInput("{bearing_span} and {com_from_a} go together: give both for the lever rule, or neither",
                       mentions=("bearing_span", "com_from_a"))
    return span, com


def _journal_loads(journal_loads, m, warnings: list) -> dict[str, float]:
    """Journal loads A and B [lb], both or none; a warning when they do not add up to the rotor mass."""
    loads = {}
    for name, value in named_pairs(journal_loads, "journal_loads"):
        if name.upper() not in ("A", "B"):
            raise BadInput.about("journal_loads", f"bearing {name!r} is not known; use A and B")
        loads[name.upper()] = journal_lb(value, f"journal_loads {name}")
    if len(loads) == 1:
        raise BadInput.about("journal_loads", "give both bearings, A and B")
    m_lb = m.m_as("lb")
    if loads and abs(loads["A"] + loads["B"] - m_lb) > 0.05 * m_lb:
        warnings.append(f"the journal loads add up to {Q_(loads['A'] + loads['B'], 'lb').m_as('kg'):.4g} kg, "
                        f"not the rotor mass {m.m_as('kg'):.4g} kg: check them")
    return loads


def _positions(planes, span):
    """The correction planes as (name, text) pairs and their positions (quantities), one or two."""
    plane_pairs = named_pairs(planes, "planes")
    positions = []
    for name, value in plane_pairs:
        if span is None:
            raise BadInput.about("planes", "correction-plane positions need {bearing_span} and {com_from_a}",
                                 mentions=("bearing_span", "com_from_a"))
        z = quantity(value, "length", f"planes {name}")
        check_axial(z.m_as("mm"), span.m_as("mm"), f"planes {name}")
        positions.append(z)
    if len(positions) > 2:
        raise BadInput.about("planes", f"{len(positions)} correction planes given; a rigid rotor takes one or two")
    return plane_pairs, positions


def _iso_shares(u_per, span, com, loads, low: float, warnings: list):
    """(bearing allocation or None, bearing A's share or None, method): ISO's lever rule from the geometry
    or from the journal loads' ratio."""
    if span is not None:
        bearings = allocate_to_bearings(u_per, span, com, min_share=low)
        warnings.extend(bearings.warnings)
        return bearings, bearings.share_a, bearings.method
    if loads:
        raw = loads["A"] / (loads["A"] + loads["B"])
        share_a = float(np.clip(raw, low, 1 - low))
        if abs(raw - share_a) > 1e-12:
            warnings.append(f"the journal loads gave shares {raw:.2f}/{1 - raw:.2f}; the bound was applied")
        return None, share_a, f"lever rule from the journal loads (W_A/W = L_B/L by statics [D]), {bounds_text(low)}"
    return None, None, None


def _journal_weights(loads, m, span, com):
    """(W_A, W_B [lb], where they come from): the loads given, else statics from the geometry (None when the
    centre of mass is outside the bearings), else None."""
    if loads:
        return loads["A"], loads["B"], "from the journal loads given"
    if span is not None:
        m_lb = m.m_as("lb")
        la = com.m_as("mm") / span.m_as("mm")
        if not 0 <= la <= 1:
            return None, None, "journal loads from the rotor mass and geometry by statics [D]"
        return m_lb * (1 - la), m_lb * la, "journal loads from the rotor mass and geometry by statics [D]"
    return None, None, None


def _at_bearings(names, u: float, share_a, iso_method, weights, m, n: float):
    """Every criterion's allowances [g*mm] at bearings A and B (None for ISO without the geometry or
    loads), with its method and notes."""
    w_a, w_b, w_text = weights
    at_bearings: dict[str, tuple[float, float] | None] = {}
    methods, notes = {}, {}
    for key in names:
        note = []
        if key == "iso":
            at_bearings[key] = None if share_a is None else (u * share_a, u * (1 - share_a))
            methods[key] = iso_method if share_a is not None else "U_per = 1000*G*m/Omega (whole rotor)"
        elif key == "api":
            if w_a is None:
                raise BadInput.about("criteria", "api needs the journal loads ({journal_loads}, A and B) or an "
                                     "inboard geometry ({bearing_span}, {com_from_a})",
                                     mentions=("journal_loads", "bearing_span", "com_from_a"))
            at_bearings[key] = (api_allowance(Q_(w_a, "lb"), Q_(n, "rpm")).m_as(G_MM),
                                api_allowance(Q_(w_b, "lb"), Q_(n, "rpm")).m_as(G_MM))
            methods[key] = f"U_max = 4*W/N oz*in per plane, W the journal static load ({w_text})"
        else:
            per_plane, rng = mil_std_167_allowance(m, Q_(n, "rpm"))
            at_bearings[key] = (per_plane.m_as(G_MM),) * 2
            methods[key] = f"MIL-STD-167-1 per plane, W the rotor weight: {rng}"
            note.append("W taken as the whole rotor weight in each plane, as our source reproduces it [H]; "
                        "check the standard's text for two-plane work")
        notes[key] = tuple(note)
    return at_bearings, methods, notes


def _per_plane(at_bearings, plane_pairs, positions, span, loads, static_share, warnings: list):
    """(plane names, criterion -> allowance per plane [g*mm], method suffix): the bearing-plane allowances
    transferred to the correction planes by statics, or the bearing planes themselves."""
    if positions:
        z = [p.m_as("mm") for p in positions]
        per_criterion = {}
        for key, ab in at_bearings.items():
            if ab is None:
                raise BadInput.about("planes", "correction planes need {bearing_span} and {com_from_a}",
                                     mentions=("bearing_span", "com_from_a"))
            per_criterion[key] = transfer_mm(ab[0], ab[1], span.m_as("mm"), z)
        d = span.m_as("mm")
        narrow = len(z) == 2 and abs(z[0] - z[1]) < d / 3
        overhung = len(z) == 2 and (max(z) < 0 or min(z) > d)
        if (narrow or overhung) and static_share is None:
            why = "closer than a third of the bearing span" if narrow else "both outboard of one bearing"
            warnings.append(Worded(f"the correction planes are {why}: state the tolerance as static and couple "
                                   "parts ({static_share}), Bloch & Geitner ch. 6", ("static_share",)))
        return ([n_ for n_, _v in plane_pairs], per_criterion,
                f"; transferred to the correction planes by {STATICS}")
    if (span is not None or loads) and all(ab is not None for ab in at_bearings.values()):
        return ["A", "B"], {k: list(ab) for k, ab in at_bearings.items()}, ""
    return [], {}, ""


def _criterion_results(names, u_per, at_bearings, methods, notes, plane_names, per_criterion, suffix,
                       one_plane) -> list[CriterionResult]:
    """One :class:`CriterionResult` per criterion; without planes, the whole-rotor ISO figure and the
    per-plane figure of the others."""
    results = []
    for key in names:
        label, source = CRITERIA[key]
        values = per_criterion.get(key)
        if key == "iso" and one_plane is not None:
            results.append(CriterionResult(key, label, f"{one_plane.method} ({one_plane.rule} rule)",
                                           one_plane.source if one_plane.rule == "whole"
                                           else f"{ISO_SOURCE}; transfer {STATICS}",
                                           ((plane_names[0], one_plane.used),), notes[key]))
            continue
        plane_list = tuple((p, Q_(v, G_MM)) for p, v in zip(plane_names, values)) if values else ()
        if not plane_list:  # no planes known: the whole-rotor ISO figure, the per-plane figure of others
            plane_list = (("rotor", u_per),) if key == "iso" else (("each plane", Q_(at_bearings[key][0], G_MM)),)
        results.append(CriterionResult(key, label, methods[key] + (suffix if values else ""),
                                       source, plane_list, notes[key]))
    return results


def _governing(names, results, plane_names, per_criterion, positions) -> list[PlaneAllowance]:
    """Each plane's strictest allowance, with the criterion that sets it."""
    governing = []
    for i, pname in enumerate(plane_names):
        value, key = min((per_criterion[k][i], k) for k in names)
        res = next(r for r in results if r.name == key)
        governing.append(PlaneAllowance(pname, Q_(value, G_MM), key, res.method, res.source,
                                        positions[i] if positions else None,
                                        tuple((k, Q_(per_criterion[k][i], G_MM)) for k in names)))
    return governing


def _governed_by_static_couple(governing, sc: StaticCouple, z: list[float], zs: float) -> list:
    """Plane allowances from static and couple tolerances [D]: residuals U1, U2 within T in both planes give
    a static part |U1 + U2| <= 2T and a couple |U1 (z1 - z_s) + U2 (z2 - z_s)| <= T (|z1 - z_s| + |z2 - z_s|),
    so T = min(S/2, U_c b / (|z1 - z_s| + |z2 - z_s|)) keeps both within their tolerances."""
    b = abs(z[1] - z[0])
    s = sc.static.m_as(G_MM)
    uc = sc.couple_per_plane.m_as(G_MM)
    t = min(s / 2.0, uc * b / (abs(z[0] - zs) + abs(z[1] - zs)))
    method = (f"from the static and couple tolerances (static share {sc.static_share:g}): T = min(S/2, "
              f"U_c*b/(|z1 - z_s| + |z2 - z_s|)), so residuals within T in both planes keep the static part "
              f"within {_fmt_g_mm(s)} and the couple part within {_fmt_g_mm(uc)} per plane ({STATICS})")
    return [PlaneAllowance(p.name, Q_(t, G_MM), p.criterion, method, sc.source, p.position, p.by_criterion)
            for p in governing]


def _fmt_g_mm(value: float) -> str:
    return f"{value:.4g} g*mm"


def _replace(obj, **changes):
    import dataclasses

    return dataclasses.replace(obj, **changes)
