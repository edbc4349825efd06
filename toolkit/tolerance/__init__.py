"""Tolerances for rigid rotors: balance quality grades, e_per and U_per, allocation to planes, other
published criteria, and the check of measured residuals against the allowances.

Sources and marks (as in docs/methods.md): S stated in a published source, H stated in a
secondary reproduction, M from memory, D derived here by statics or algebra, CP common shop practice.

* Grade, e_per and U_per: ISO 21940-11:2016, clauses 6.3 and 6.3.3 [S]; the shop constant
  60000/(2*pi) = 9549.297 [D].
* Lever rule to the two bearing planes: ISO 21940-11:2016, 7.2 [M for the clause wording]; each share kept
  between 0.3 and 0.7 (never more than 7 : 3) per Bloch & Geitner, *Machinery Component Maintenance and
  Repair*, ch. 6 [S; the numbers in ISO form M]. The bounds can be overridden (``min_share``).
* Transfer from the bearing planes to correction planes at any axial position: rigid-body statics [D]. It
  gives the lever rule for planes at the bearings and the d/b reduction of Bloch & Geitner for planes
  outside them.
* One correction plane (a narrow, disc-like rotor, ISO 21940-11:2016, 4.5.2): the whole U_per is that
  plane's tolerance (ISO 21940-11:2016, 7.1 and 8.2, clause numbers from the standard's contents; the rule
  as stated in secondary notes on disc-shaped rotors [H]). The statics transfer is kept as a stricter
  option (``one_plane_rule="statics"``). When the one-plane conditions are doubtful (a long rotor, a plane
  far from the centre of mass) the report carries :class:`OnePlaneDoubt` records naming the parameters to
  check; the limits used are rules of thumb [CP], overridable.
* Static and couple tolerances for narrow or overhung rotors: the rule to use them is Bloch & Geitner
  ch. 6 [S]; the split formula is statics [D]. No figure here is the standard's own for that case.
* API 4W/N per plane: API Std 617, 7th ed., Annex B [S]; SI form 6350 W/N [H, D].
* MIL-STD-167-1 (1974) by speed range [H]: 0.177 W below 150 r/min, 4000 W/N^2 to 1000 r/min, 4 W/N above.
* Acceptance with an error allowance Delta U: ISO 21940-14:2012 as recalled [M]; Delta U defaults to 0.

Every public function takes pint quantities or strings with units (``"412 kg"``, ``"1480 rpm"``); the array
functions (:func:`permissible_unbalance`, :func:`specific_unbalance`, :func:`bearing_allowances`) also take
quantity arrays and convert them once at the boundary.

One module per concern; every public name is importable from ``toolkit.tolerance``:

* :mod:`~toolkit.tolerance.grades`: the grade series and :func:`parse_grade`;
* :mod:`~toolkit.tolerance.uper`: e_per and U_per;
* :mod:`~toolkit.tolerance.allocation`: the bounded lever rule and the transfer to correction planes;
* :mod:`~toolkit.tolerance.one_plane`: the one-plane rule and its doubts;
* :mod:`~toolkit.tolerance.static_couple`: static and couple tolerances;
* :mod:`~toolkit.tolerance.api`, :mod:`~toolkit.tolerance.milstd`: the other published criteria;
* :mod:`~toolkit.tolerance.check`: measured residuals against the allowances (the check-run rule);
* :mod:`~toolkit.tolerance.report`: :func:`tolerance_report`, all of them for one rotor;
* :mod:`~toolkit.tolerance.boundary`: unit texts, sources and the array boundary helpers they share.
"""

from toolkit.tolerance.allocation import (AXIAL_LIMIT_SPANS, DEFAULT_MIN_SHARE, BearingAllocation,
                                          allocate_to_bearings, bearing_allowances, transfer_to_planes)
from toolkit.tolerance.api import API_OZ_IN_PER_LB, api_allowance
from toolkit.tolerance.check import CHECK_STAGES, ResidualCheck, check_residuals, named_pairs
from toolkit.tolerance.grades import GRADE_SCHEMA, Grade, grades, parse_grade
from toolkit.tolerance.milstd import MIL_STD_167_RANGES, mil_std_167_allowance
from toolkit.tolerance.one_plane import (ONE_PLANE_LENGTH_RATIO, ONE_PLANE_OFFSET_RATIO, ONE_PLANE_RULES,
                                         ONE_PLANE_SPAN_RATIO, OnePlane, OnePlaneDoubt, one_plane_allowance)
from toolkit.tolerance.report import CRITERIA, CriterionResult, PlaneAllowance, ToleranceReport, tolerance_report
from toolkit.tolerance.static_couple import StaticCouple, static_couple_allowance
from toolkit.tolerance.uper import SHOP_CONSTANT, permissible_unbalance, specific_unbalance

__all__ = [
    "SHOP_CONSTANT",
    "DEFAULT_MIN_SHARE",
    "CRITERIA",
    "Grade",
    "grades",
    "parse_grade",
    "specific_unbalance",
    "permissible_unbalance",
    "bearing_allowances",
    "BearingAllocation",
    "allocate_to_bearings",
    "transfer_to_planes",
    "StaticCouple",
    "static_couple_allowance",
    "api_allowance",
    "mil_std_167_allowance",
    "CriterionResult",
    "PlaneAllowance",
    "ResidualCheck",
    "check_residuals",
    "named_pairs",
    "ToleranceReport",
    "tolerance_report",
    "ONE_PLANE_RULES",
    "OnePlane",
    "OnePlaneDoubt",
    "one_plane_allowance",
]

