"""Keyed rotors: key conventions, the unbalance a key mismatch leaves, and its correction.

Sources and marks (S published, H secondary reproduction, M from memory, D derived here, CP common practice):

* Conventions. ISO 21940-32:2012 (which replaced ISO 8821:1989) specifies one convention for balancing the
  components of a keyed assembly separately: the **half-key** convention, for the shaft and for each
  fitment, so that the assembly is balanced when it is put together [S, scope]. The older full-key
  convention (shaft balanced with a full key, fitment without) and the no-key convention still occur on
  older parts [S].
* Marking. The standard specifies a marking of components by convention; motor makers stamp "H"
  (half-key) or "F" (full-key) on the shaft face [H: a motor maker's configuration manual, 2022]. That these
  letters are the standard's own wording is from memory [M]; the marking is therefore overridable and each
  result says which marking it used.
* Half-key. A key as long as the straight part of the keyway and half the height of the final key's full
  cross-section, fixed in the keyway during balancing [H: "Practical Solutions to Machinery and
  Maintenance Vibration Problems", ch. 5, section 16, "Unbalance due to assembly errors - key length
  considerations"].
* What a mismatch leaves [D]: every body (the key in service, the half-keys or keys that sat in the
  keyways while each component was balanced) is a rectangular bar of width w between radii r_in and r_out
  from the axis, over an axial length L. Its unbalance is m * r_c = rho * w * (r_out - r_in) * L *
  (r_in + r_out)/2 = rho * w * L * (r_out^2 - r_in^2)/2, at the keyway's angle. A component balanced with a
  body in its keyway is balanced *with* that body; so the assembly in service is left with
  U = U(key in service) - U(bodies present while the shaft was balanced) - U(... while the hub was
  balanced). The key sits on the shaft keyway's floor (radius R - t1); the shaft's half-key sits there too;
  the hub's half-key sits against the hub keyway's floor (radius R + t2), so that the two half-keys make up
  the full key exactly where the key spans both half-key lengths and h = t1 + t2.
* Correction [CP]: cut the key to length, or fit a compensating half-key, where the error exceeds the
  tolerance, most of all above about 1000 r/min; otherwise the usual holes, plates or washers.

Angles are degrees from the rotor's reference mark, in the sense used for every angle of the job. Axial
positions are measured along the shaft from the same datum as the correction planes (e.g. bearing A).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from toolkit.errors import BadInput, Infeasible, Worded
from toolkit.units import Q_, magnitude
from toolkit.vectors import parse_angle

__all__ = ["CONVENTIONS", "FILLS", "SERVICE", "MARKINGS", "KeyBody", "KeyPart", "KeyCorrection", "KeyUnbalance",
           "KeyConvention", "bar_unbalance", "default_fill", "key_convention", "key_unbalance", "HIGH_SPEED_RPM"]

#: The key conventions a component can be balanced to; half-key is the standard's (ISO 21940-32:2012).
CONVENTIONS = ("half-key", "full-key", "no-key")
#: What sat in a keyway while the component was balanced.
FILLS = ("key", "half-key", "nothing")
#: What sits in the shaft keyway in service (or on this run).
SERVICE = ("key", "nothing")
#: The marking stamped by convention [H for the letters as motor makers stamp them; M as the standard's
#: own wording]; overridable.
MARKINGS = {"half-key": "H", "full-key": "F", "no-key": "none"}
MARKING_MARK = "H (as motor makers stamp it); M as the standard's own wording"
#: Above this speed common practice insists on cutting keys to length or fitting a compensating half-key
#: [CP]; used only in a note.
HIGH_SPEED_RPM = 1000.0

_CONVENTION_SOURCE = "ISO 21940-32:2012, scope (half-key convention; full-key and no-key on older parts) [S]"
_HALF_KEY_SOURCE = ("Practical Solutions to Machinery and Maintenance Vibration Problems, ch. 5, section 16 "
                    "(half-key: keyway length, half the key's height) [H]")
_METHOD = ("rectangular bars [D]: U = rho * w * L * (r_out^2 - r_in^2)/2 at the keyway's angle for each body; "
           "left in service = key in service - bodies in the keyways while each component was balanced")

CAUTIONS = ("Keys and half-keys must be secured before any run; guards closed and people clear of the plane of "
            "rotation. Cutting or grinding a key: follow the rotor maker's instructions, local codes and "
            "licensed practice.",)


def bar_unbalance(width, r_in, r_out, length, density) -> object:
    """The unbalance of a rectangular bar about the shaft axis: rho * w * L * (r_out^2 - r_in^2) / 2 [D].

    The bar lies with its faces at distances r_in and r_out from the axis, on the radius through its centre
    line (a key on a keyway's flat floor); its mass rho*w*(r_out - r_in)*L sits at the centroid radius
    (r_in + r_out)/2. Parameters: width, r_in, r_out, length : Quantity [length]; density : Quantity
    [mass/length^3]. Returns a Quantity [g*mm].

    >>> round(bar_unbalance("14 mm", "24 mm", "28.5 mm", "14 mm", "7850 kg/m^3").m_as("g*mm"), 2)
    181.75
    """
    w = magnitude(width, "length", "mm", "width", positive=True)
    a = magnitude(r_in, "length", "mm", "r_in", nonnegative=True)
    b = magnitude(r_out, "length", "mm", "r_out", positive=True)
    L = magnitude(length, "length", "mm", "length", nonnegative=True)
    rho = magnitude(density, "density", "g/mm**3", "density", positive=True)
    if b <= a:
        raise BadInput.about("r_out", f"{b:g} mm must be greater than r_in ({a:g} mm)")
    return Q_(_q(rho, w, a, b) * L, "g*mm")


def _q(rho: float, w: float, a: float, b: float) -> float:
    """Unbalance per unit length [g*mm/mm] of a bar of width w between radii a and b (g/mm^3, mm)."""
    return rho * w * (b * b - a * a) / 2.0


@dataclass(frozen=True)
class KeyBody:
    """One body in the accounting: the key in service (+) or a key or half-key that sat in a keyway while a
    component was balanced (-); radii from the axis and axial extent in mm."""

    label: str
    sign: int
    r_in_mm: float
    r_out_mm: float
    z_start_mm: float
    z_end_mm: float
    mass_g: float
    unbalance_g_mm: float   # unsigned, at the keyway's angle

    def to_dict(self) -> dict:
        return dict(self.__dict__)


@dataclass(frozen=True)
class KeyPart:
    """An axial stretch with one cause: the unbalance left there (signed along the keyway's angle)."""

    cause: str
    z_start_mm: float
    z_end_mm: float
    signed_g_mm: float
    explanation: str

    def to_dict(self) -> dict:
        return dict(self.__dict__)


@dataclass(frozen=True)
class KeyCorrection:
    """What to do about the key error: remove at the heavy spot or add opposite it, a compensating
    half-key, trimming a protruding key, or a fabricated correction (a :class:`~toolkit.fabricate.plan.Plan`)."""

    action: str              # "remove" at the heavy spot (or "none" when nothing is left)
    amount_g_mm: float
    angle_deg: float         # where to remove (the heavy spot); add the same opposite, angle + 180
    add_angle_deg: float
    words: str
    half_key_length_mm: float | None   # compensating half-key (when the keyway side is light)
    half_key_room_mm: float            # empty shaft keyway length available for it
    trim_length_mm: float | None       # protruding key cut down to the half-key height over this length
    protruding_mm: float
    options: tuple[str, ...]
    plan: object = field(default=None, compare=False)

    def to_dict(self) -> dict:
        d = {k: v for k, v in self.__dict__.items() if k != "plan"}
        d["options"] = list(self.options)
        d["plan"] = self.plan.to_dict() if self.plan is not None else None
        return d


@dataclass(frozen=True)
class Check:
    """The key error (or its share in a plane) against an allowance."""

    where: str
    amount_g_mm: float
    allowance_g_mm: float
    passed: bool

    def to_dict(self) -> dict:
        return dict(self.__dict__)


@dataclass(frozen=True)
class KeyUnbalance:
    """The unbalance a key mismatch leaves, at the keyway's angle or opposite it, with its parts, its shares in
    the correction planes, the allowance check and the correction."""

    amount_g_mm: float
    angle_deg: float          # heavy spot: the keyway's angle when the keyway side is heavy, else + 180
    signed_g_mm: float        # along the keyway's angle (+ heavy at the keyway, - light there)
    net_mass_g: float
    axial_centre_mm: float | None
    keyway_angle_deg: float
    bodies: tuple[KeyBody, ...]
    parts: tuple[KeyPart, ...]
    planes: tuple            # PlaneShare values (empty without planes)
    checks: tuple[Check, ...]
    correction: KeyCorrection
    conventions: dict
    inputs: dict
    density: object
    method: str
    source: str
    warnings: tuple[str, ...]
    cautions: tuple[str, ...] = CAUTIONS

    @property
    def unbalance(self):
        return Q_(self.amount_g_mm, "g*mm")

    @property
    def passed(self) -> bool | None:
        return None if not self.checks else all(c.passed for c in self.checks)

    def as_item(self, name: str = "key"):
        """This error as a contribution to :func:`toolkit.fits.error_budget` (angle known)."""
        from toolkit.fits import BudgetItem

        return BudgetItem(str(name), "key", self.amount_g_mm, self.angle_deg, "key mismatch: " + self.method)

    def to_dict(self) -> dict:
        return {"amount_g_mm": self.amount_g_mm, "angle_deg": self.angle_deg, "signed_g_mm": self.signed_g_mm,
                "net_mass_g": self.net_mass_g, "axial_centre_mm": self.axial_centre_mm,
                "keyway_angle_deg": self.keyway_angle_deg, "bodies": [b.to_dict() for b in self.bodies],
                "parts": [p.to_dict() for p in self.parts], "planes": [p.to_dict() for p in self.planes],
                "checks": [c.to_dict() for c in self.checks], "passed": self.passed,
                "correction": self.correction.to_dict(), "conventions": dict(self.conventions),
                "inputs": dict(self.inputs), **self.density.to_dict(), "method": self.method, "source": self.source,
                "warnings": list(self.warnings), "cautions": list(self.cautions)}


def default_fill(convention: str, component: str) -> str:
    """What sits in a keyway while a component is balanced to ``convention`` (``component`` is "shaft" or
    "hub"): half-key -> half-key; full-key -> the key in the shaft, nothing in the hub; no-key -> nothing.

    >>> default_fill("full-key", "shaft"), default_fill("full-key", "hub"), default_fill("half-key", "hub")
    ('key', 'nothing', 'half-key')
    """
    _choice(convention, CONVENTIONS, f"{component}_convention")
    if convention == "half-key":
        return "half-key"
    if convention == "full-key":
        return "key" if component == "shaft" else "nothing"
    return "nothing"


@dataclass(frozen=True)
class KeyConvention:
    """What a component is balanced to, what sits in its keyway while it is balanced, and its marking."""

    component: str
    convention: str
    fill: str
    marking: str
    marking_given: bool
    source: str
    warnings: tuple[str, ...]

    @property
    def words(self) -> str:
        """One sentence for an output: e.g. 'balanced to the half-key convention with a half-key in the keyway,
        marked H (by convention)'."""
        fill = {"key": "the key", "half-key": "a half-key", "nothing": "the keyway empty"}[self.fill]
        return (f"balanced to the {self.convention} convention with {fill}"
                + (" in the keyway" if self.fill != "nothing" else "") + f", marked {self.marking}"
                + ("" if self.marking_given else " (by convention)"))

    def to_dict(self) -> dict:
        d = dict(self.__dict__)
        d["warnings"] = list(self.warnings)
        d["marking_mark"] = "given" if self.marking_given else "M"
        return d


def key_convention(convention="half-key", fill=None, marking=None, component="shaft") -> KeyConvention:
    """The key convention a component is balanced to (:data:`CONVENTIONS`; half-key is ISO 21940-32:2012's),
    what sat in its keyway (:data:`FILLS`; default :func:`default_fill`) and its marking (default by
    convention, :data:`MARKINGS`, from memory [M] and overridable). A fill that does not follow the
    convention gives a warning.

    >>> k = key_convention("full-key", component="shaft")
    >>> k.fill, k.marking, k.words
    ('key', 'F', 'balanced to the full-key convention with the key in the keyway, marked F (by convention)')
    >>> key_convention("half-key", fill="nothing").warnings[0][:40]
    'fill: an empty keyway does not follow th'
    """
    comp = _choice(component, ("shaft", "hub"), "component")
    conv = _choice(convention, CONVENTIONS, "convention")
    expected = default_fill(conv, comp)
    got = expected if fill is None else _choice(fill, FILLS, "fill")
    warnings = []
    if got != expected:
        words = {"key": "a key", "half-key": "a half-key", "nothing": "an empty keyway"}
        warnings.append(Worded(f"{{fill}}: {words[got]} does not follow the {conv} convention this {comp} is "
                               f"balanced to ({words[expected]} in its keyway)", ("fill",)))
    given = marking is not None and str(marking).strip() != ""
    return KeyConvention(comp, conv, got, str(marking).strip() if given else MARKINGS[conv], given,
                         _CONVENTION_SOURCE + "; marking: " + MARKING_MARK, tuple(warnings))


def _choice(value, allowed, name: str) -> str:
    text = str(value).strip().lower() if isinstance(value, str) else value
    if text not in allowed:
        raise BadInput.about(name, f"{value!r} is not allowed; use one of {', '.join(allowed)}")
    return text


def _len(value, name: str, *, positive=True, signed=False) -> float:
    if signed:
        return float(magnitude(value, "length", "mm", name))
    return float(magnitude(value, "length", "mm", name, positive=positive, nonnegative=not positive))


def key_unbalance(*, width, height, shaft_depth, shaft_diameter, keyway_length, key_length=None,
                  hub_length=None, hub_depth=None, keyway_start="0 mm", key_start=None, hub_start=None,
                  keyway_angle=0.0, material=None, density=None, shaft_convention="half-key", shaft_fill=None,
                  hub_convention=None, hub_fill=None, half_key_height=None, half_key_length=None,
                  hub_half_key_height=None, hub_half_key_length=None, in_service="key", shaft_marking=None,
                  hub_marking=None, planes=None, allowance=None, fix_method=None, fix_radius=None,
                  fix_options=None, materials_table="materials", units="metric") -> KeyUnbalance:
    """The unbalance a key mismatch leaves in a keyed assembly, its shares in the correction planes, the
    check against an allowance and the correction.

    Geometry (all Quantity [length]): width and height of the key (the full key, e.g. 14 x 9 mm); shaft_depth
    t1 of the shaft keyway below the shaft surface; hub_depth t2 of the hub keyway beyond the bore (default
    height - t1: the key fills both); shaft_diameter; keyway_length, the straight part of the shaft keyway;
    key_length (default the keyway length); hub_length, the hub's length over the key (None: no hub, a rotor
    run solo). Axial positions (signed Quantity [length], along the shaft from the planes' datum):
    keyway_start, key_start and hub_start, the ends nearer the datum (the key and the hub default to the
    keyway's start). keyway_angle [deg] from the reference mark. material or density: the key's (see
    :func:`toolkit.fabricate.materials.resolve_density`).

    Conventions: shaft_convention and hub_convention, one of :data:`CONVENTIONS`; shaft_fill and hub_fill,
    what sat in each keyway while that component was balanced (:data:`FILLS`; default from the convention,
    :func:`default_fill`); half_key_height/length and hub_half_key_height/length, the half-keys actually
    used (default half the key's height, and the shaft keyway's or the hub's length); in_service, what sits
    in the keyway now (:data:`SERVICE`); shaft_marking, hub_marking: the stamp by convention
    (:data:`MARKINGS`, overridable [M]).

    planes: one or two correction planes, a mapping name -> position or pairs (see
    :func:`toolkit.fits.split_to_planes`); allowance: one Quantity [mass*length] for every plane (or for the
    resultant without planes) or a mapping plane name -> allowance. fix_method ("drill", "plate" or
    "washers") with fix_radius and fix_options (keywords of :func:`toolkit.fabricate.plan.plan_correction`)
    plans the fabricated correction of the resultant.

    Returns :class:`KeyUnbalance`. Refuses a key longer than its keyway or taller than both keyways, and a
    half-key that does not fit.

    >>> r = key_unbalance(width="14 mm", height="9 mm", shaft_depth="5.5 mm", hub_depth="3.8 mm",
    ...                   shaft_diameter="50 mm", keyway_length="70 mm", hub_length="56 mm",
    ...                   hub_start="14 mm", keyway_angle=90, material="steel")
    >>> round(r.amount_g_mm, 1), r.angle_deg, [p.cause for p in r.parts]
    (173.4, 90.0, ['key protrudes beyond the hub', 'half-keys do not make up the key'])
    """
    from toolkit.fabricate.materials import resolve_density
    from toolkit.fits import _plane_list, _shares, _to_shares

    w = _len(width, "width")
    h = _len(height, "height")
    t1 = _len(shaft_depth, "shaft_depth")
    D = _len(shaft_diameter, "shaft_diameter")
    R = D / 2.0
    Ls = _len(keyway_length, "keyway_length")
    Lk = Ls if key_length is None else _len(key_length, "key_length")
    zs = _len(keyway_start, "keyway_start", signed=True)
    zk = zs if key_start is None else _len(key_start, "key_start", signed=True)
    theta = parse_angle(keyway_angle, "keyway_angle")
    rho = resolve_density(material, density, materials_table)
    g_mm3 = rho.g_mm3
    service = _choice(in_service, SERVICE, "in_service")
    s_conv = _choice(shaft_convention, CONVENTIONS, "shaft_convention")
    s_fill = default_fill(s_conv, "shaft") if shaft_fill is None else _choice(shaft_fill, FILLS, "shaft_fill")
    has_hub = hub_length is not None
    warnings: list[str] = []

    if t1 >= R:
        raise BadInput.about("shaft_depth", f"{t1:g} mm is not less than the shaft radius ({R:g} mm)")
    if w >= D:
        raise BadInput.about("width", f"{w:g} mm is not less than the shaft diameter ({D:g} mm)")
    if h <= t1 and service == "key":
        warnings.append(Worded(f"{{height}}: the key ({h:g} mm) is no taller than the shaft keyway is deep "
                               f"({t1:g} mm); it cannot drive a hub", ("height",)))
    if Lk > Ls + 1e-9 or zk < zs - 1e-9 or zk + Lk > zs + Ls + 1e-9:
        raise BadInput.about("key_length/key_start", f"the key ({Lk:g} mm from {zk:g} mm) does not lie within the shaft "
                       f"keyway ({Ls:g} mm from {zs:g} mm); give a key that fits the keyway")
    r0 = R - t1                                  # shaft keyway floor
    bodies: list[KeyBody] = []

    def body(label, sign, a, b, z0, length):
        q = _q(g_mm3, w, a, b)
        bodies.append(KeyBody(label, sign, a, b, z0, z0 + length, g_mm3 * w * (b - a) * length, q * length))

    if service == "key":
        body("key in service", +1, r0, r0 + h, zk, Lk)
    hk_h = h / 2.0 if half_key_height is None else _len(half_key_height, "half_key_height")
    hk_L = Ls if half_key_length is None else _len(half_key_length, "half_key_length")
    if s_fill == "half-key":
        if hk_h > h + 1e-9:
            raise BadInput.about("half_key_height", f"{hk_h:g} mm is taller than the key ({h:g} mm)")
        if hk_L > Ls + 1e-9:
            raise BadInput.about("half_key_length", f"{hk_L:g} mm is longer than the shaft keyway ({Ls:g} mm)")
        if abs(hk_h - h / 2.0) > 1e-9 * h:
            warnings.append(Worded(f"{{half_key_height}}: the shaft's half-key was {hk_h:g} mm high, not half the "
                                   f"key's {h:g} mm ({h / 2:g} mm)", ("half_key_height",)))
        body("shaft's half-key while the shaft was balanced", -1, r0, r0 + hk_h, zs, hk_L)
    elif s_fill == "key":
        body("key in the shaft while the shaft was balanced", -1, r0, r0 + h, zk, Lk)

    conventions = {"shaft": {"convention": s_conv, "fill": s_fill,
                             "marking": MARKINGS[s_conv] if shaft_marking is None else str(shaft_marking),
                             "marking_given": shaft_marking is not None}}
    h_conv = h_fill = None
    Lh = zh = t2 = None
    if has_hub:
        Lh = _len(hub_length, "hub_length")
        zh = zk if hub_start is None else _len(hub_start, "hub_start", signed=True)
        t2 = (h - t1) if hub_depth is None else _len(hub_depth, "hub_depth")
        if hub_depth is None:
            warnings.append(Worded(f"{{hub_depth}}: not given; taken as the key's height less the shaft keyway's "
                                   f"depth ({t2:g} mm), the key filling both keyways", ("hub_depth",)))
        if service == "key" and r0 + h > R + t2 + 1e-9:
            raise BadInput.about("height", f"the key ({h:g} mm) is taller than the two keyways together ({t1:g} + {t2:g} "
                           f"mm); the hub would not go on")
        h_conv = _choice("half-key" if hub_convention is None else hub_convention, CONVENTIONS, "hub_convention")
        h_fill = default_fill(h_conv, "hub") if hub_fill is None else _choice(hub_fill, FILLS, "hub_fill")
        hh_h = h / 2.0 if hub_half_key_height is None else _len(hub_half_key_height, "hub_half_key_height")
        hh_L = Lh if hub_half_key_length is None else _len(hub_half_key_length, "hub_half_key_length")
        if h_fill == "half-key":
            if hh_L > Lh + 1e-9:
                raise BadInput.about("hub_half_key_length", f"{hh_L:g} mm is longer than the hub ({Lh:g} mm)")
            if hh_h > t2 + t1 + 1e-9 or hh_h > h + 1e-9:
                raise BadInput.about("hub_half_key_height", f"{hh_h:g} mm is taller than the key ({h:g} mm)")
            if abs(hh_h - h / 2.0) > 1e-9 * h:
                warnings.append(Worded(f"{{hub_half_key_height}}: the hub's half-key was {hh_h:g} mm high, not "
                                       f"half the key's {h:g} mm ({h / 2:g} mm)", ("hub_half_key_height",)))
            body("hub's half-key while the hub was balanced", -1, R + t2 - hh_h, R + t2, zh, hh_L)
        elif h_fill == "key":
            body("key in the hub while the hub was balanced", -1, r0, r0 + h, zh, Lh)
        conventions["hub"] = {"convention": h_conv, "fill": h_fill,
                              "marking": MARKINGS[h_conv] if hub_marking is None else str(hub_marking),
                              "marking_given": hub_marking is not None}
        if h_conv != s_conv:
            warnings.append(f"conventions: the shaft was balanced to the {s_conv} convention and the hub to the "
                            f"{h_conv} convention; the assembly carries the difference")
        if service == "key" and (zh >= zk + Lk or zh + Lh <= zk):
            warnings.append(Worded("{hub_start}: the hub does not lie over the key; check the axial positions",
                                   ("hub_start",)))
    if not has_hub:
        ignored = [n for n, v in (("hub_depth", hub_depth), ("hub_start", hub_start), ("hub_convention", hub_convention),
                                  ("hub_fill", hub_fill), ("hub_half_key_height", hub_half_key_height),
                                  ("hub_half_key_length", hub_half_key_length), ("hub_marking", hub_marking))
                   if v is not None]
        if ignored:
            warnings.append(Worded(f"{{{ignored[0]}}}: no {{hub_length}}, so no hub in this case; "
                                   f"{', '.join('{' + n + '}' for n in ignored)} not used",
                                   ("hub_length", *ignored)))
    for comp, conv, fill in (("shaft", s_conv, s_fill), ("hub", h_conv, h_fill)):
        if conv is not None and fill != default_fill(conv, comp):
            warnings.append(Worded(f"{{{comp}_fill}}: a {fill.replace('nothing', 'empty keyway')} while the "
                                   f"{comp} was balanced does not follow the {conv} convention it is marked with; "
                                   f"computed with what sat in the keyway", (f"{comp}_fill",)))

    parts = _parts(bodies, g_mm3, w, (zk, zk + Lk) if service == "key" else None,
                   (zh, zh + Lh) if has_hub else None)
    signed = sum(p.signed_g_mm for p in parts)
    moment = sum(b.sign * b.unbalance_g_mm * (b.z_start_mm + b.z_end_mm) / 2 for b in bodies)
    net_mass = sum(b.sign * b.mass_g for b in bodies)
    scale = max((b.unbalance_g_mm for b in bodies), default=0.0)
    tiny = 1e-9 * max(scale, 1e-12)
    if abs(signed) <= tiny:
        signed = 0.0
    if not all(math.isfinite(x) for x in (signed, moment, net_mass)):
        raise BadInput.about("width/height/keyway_length", "the key's dimensions give an unbalance beyond the "
                       "floating-point range; check their units")
    amount = abs(signed)
    heavy = theta if signed >= 0 else parse_angle(theta + 180.0)
    centre = moment / signed if signed != 0.0 else None
    if signed == 0.0 and abs(moment) > tiny * max(1.0, Ls):
        warnings.append("the key error has no resultant but a couple: its parts at different axial positions "
                        "cancel in one plane, not in two; see the plane shares")

    plane_list = None if planes is None else _plane_list(planes)
    shares = ()
    if plane_list is not None:
        rot = complex(math.cos(math.radians(theta)), math.sin(math.radians(theta)))
        pieces = [(b.sign * b.unbalance_g_mm * rot, (b.z_start_mm + b.z_end_mm) / 2) for b in bodies]
        shares = _to_shares(_shares(pieces, plane_list), plane_list)
        if len(plane_list) == 1 and centre is not None and abs(centre - plane_list[0][1]) > 0.0:
            warnings.append(Worded(f"{{planes}}: one plane takes the whole key error; its axial offset from the "
                                   f"plane ({abs(centre - plane_list[0][1]):.4g} mm) makes a couple that one "
                                   f"plane does not correct", ("planes",)))
    checks = _checks(allowance, amount, shares)
    correction = _correction(amount, signed, heavy, parts, g_mm3, w, r0, h, hk_h, Ls, zs, zk, Lk, service,
                             fix_method, fix_radius, fix_options, material, density, materials_table, units,
                             checks)
    inputs = {"width_mm": w, "height_mm": h, "shaft_depth_mm": t1, "hub_depth_mm": t2, "shaft_diameter_mm": D,
              "keyway_length_mm": Ls, "key_length_mm": Lk, "hub_length_mm": Lh, "keyway_start_mm": zs,
              "key_start_mm": zk, "hub_start_mm": zh, "keyway_angle_deg": theta, "in_service": service,
              "half_key_height_mm": hk_h, "half_key_length_mm": hk_L if s_fill == "half-key" else None,
              "planes": None if plane_list is None else [{"name": n, "position_mm": z} for n, z in plane_list]}
    source = "; ".join((_CONVENTION_SOURCE, _HALF_KEY_SOURCE, "marking: " + MARKING_MARK,
                        "correction by cutting the key or a compensating half-key [CP]"))
    return KeyUnbalance(amount, heavy, signed, net_mass, centre, theta, tuple(bodies), parts, shares, checks,
                        correction, conventions, inputs, rho, _METHOD, source, tuple(warnings))


def _parts(bodies: list[KeyBody], rho: float, w: float, key_span, hub_span) -> tuple[KeyPart, ...]:
    """The bodies' net unbalance cut into axial stretches, each named by its cause."""
    cuts = sorted({z for b in bodies for z in (b.z_start_mm, b.z_end_mm)})
    raw = []
    for a, b in zip(cuts, cuts[1:]):
        if b - a <= 1e-12:
            continue
        mid = (a + b) / 2
        here = [x for x in bodies if x.z_start_mm <= mid <= x.z_end_mm]
        q = sum(x.sign * _q(rho, w, x.r_in_mm, x.r_out_mm) for x in here)
        value = q * (b - a)
        if abs(value) <= 1e-9 * max((x.unbalance_g_mm for x in bodies), default=1.0):
            continue
        key = key_span is not None and key_span[0] <= mid <= key_span[1]
        hub = hub_span is not None and hub_span[0] <= mid <= hub_span[1]
        labels = [x.label for x in here]
        raw.append((_cause(key, hub, labels, hub_span is not None), a, b, value, labels))
    # join neighbouring stretches of the same cause
    parts: list[KeyPart] = []
    for cause, a, b, value, labels in raw:
        if parts and parts[-1].cause == cause and abs(parts[-1].z_end_mm - a) < 1e-9:
            p = parts[-1]
            parts[-1] = KeyPart(cause, p.z_start_mm, b, p.signed_g_mm + value, p.explanation)
        else:
            parts.append(KeyPart(cause, a, b, value, "; ".join(labels) if labels else "nothing"))
    return tuple(parts)


def _cause(key: bool, hub: bool, labels: list[str], has_hub: bool) -> str:
    shaft_half = any(l.startswith("shaft's half-key") for l in labels)
    shaft_key = any(l.startswith("key in the shaft") for l in labels)
    hub_body = any("hub was balanced" in l for l in labels)
    if key and not hub and shaft_half:
        return "key protrudes beyond the hub" if has_hub else "key without a hub over the shaft's half-key"
    if key and not hub and shaft_key:
        return "key outside the hub, balanced as a full key"
    if not key and (shaft_half or shaft_key) and not hub_body:
        return "empty keyway (a key or half-key sat in it while balancing)"
    if not key and hub_body:
        return "no key under the hub (the hub was balanced with one)"
    if key and not (shaft_half or shaft_key or hub_body):
        return "key not allowed for in balancing"
    if key and hub and shaft_half and hub_body:
        return "half-keys do not make up the key"
    return "components balanced to different conventions"


def _checks(allowance, amount: float, shares) -> tuple[Check, ...]:
    if allowance is None:
        return ()
    if hasattr(allowance, "items"):
        if not shares:
            raise BadInput.about("allowance", "allowances by plane need the planes; give the planes or one allowance")
        names = {s.plane for s in shares}
        unknown = sorted(set(str(k) for k in allowance) - names)
        if unknown:
            raise BadInput.about("allowance", f"no plane called {unknown[0]!r}; planes: {', '.join(sorted(names))}")
        out = []
        for s in shares:
            if s.plane in allowance:
                a = float(magnitude(allowance[s.plane], "unbalance", "g*mm", f"allowance {s.plane}", positive=True))
                out.append(Check(s.plane, s.amount_g_mm, a, s.amount_g_mm <= a))
        return tuple(out)
    a = float(magnitude(allowance, "unbalance", "g*mm", "allowance", positive=True))
    if shares:
        return tuple(Check(s.plane, s.amount_g_mm, a, s.amount_g_mm <= a) for s in shares)
    return (Check("resultant", amount, a, amount <= a),)


def _correction(amount, signed, heavy, parts, rho, w, r0, h, hk_h, Ls, zs, zk, Lk, service, fix_method,
                fix_radius, fix_options, material, density, table, units, checks) -> KeyCorrection:
    from toolkit.formatting import Formatter

    say = Formatter(units)
    add_angle = parse_angle(heavy + 180.0)
    protruding = sum(p.z_end_mm - p.z_start_mm for p in parts if p.cause == "key protrudes beyond the hub")
    # empty length of the shaft keyway now (no key in it): room for a compensating half-key
    room = Ls if service == "nothing" else Ls - Lk
    q_half = _q(rho, w, r0, r0 + hk_h)
    options: list[str] = []
    half_len = trim_len = None
    if amount == 0.0:
        return KeyCorrection("none", 0.0, heavy, add_angle, "nothing to correct: the key error has no resultant",
                             None, room, None, protruding, ())
    words = (f"remove {say.unbalance(amount)} at {heavy:g}° (the heavy spot), or add {say.unbalance(amount)} at "
             f"{add_angle:g}°")
    if signed < 0:
        half_len = amount / q_half
        fits = half_len <= room + 1e-9
        options.append(f"fit a compensating half-key {say.depth(half_len)} long ({say.dimension(w)} wide, "
                       f"{say.dimension(hk_h)} high) in the empty shaft keyway at {parse_angle(heavy + 180):g}°"
                       + ("" if fits else f"; only {say.depth(room)} of the keyway is empty, so it does not fit "
                                           f"there: use a fabricated correction"))
    elif protruding > 0:
        q_top = _q(rho, w, r0 + hk_h, r0 + h)
        trim_len = amount / q_top
        options.append(f"cut the key's part outside the hub down to the half-key height ({say.dimension(hk_h)}) over "
                       f"{say.depth(trim_len)} (it protrudes {say.depth(protruding)}), or cut the key to the hub's "
                       f"length and fit a half-key in the rest of the keyway")
    if fix_method is not None:
        options.append(f"fabricated correction by {fix_method}: see the plan")
    plan = None
    if fix_method is not None:
        from toolkit.fabricate.plan import plan_correction

        if fix_radius is None:
            raise BadInput.about("fix_radius", "a fabricated correction needs its radius, e.g. '120 mm'")
        kw = dict(fix_options or {})
        allow = min((c.allowance_g_mm for c in checks), default=None)
        if allow is not None and "allowance" not in kw:
            kw["allowance"] = Q_(allow, "g*mm")
        kw.setdefault("material", material)
        kw.setdefault("density", density)
        kw.setdefault("materials_table", table)
        kw.setdefault("units", units)
        try:
            plan = plan_correction(Q_(amount, "g*mm"), heavy, fix_method, radius=fix_radius, action="remove", **kw)
        except Infeasible as exc:
            raise Infeasible.about("fix_method", f"{fix_method} cannot carry out the key correction ({exc})") from None
    return KeyCorrection("remove", amount, heavy, add_angle, words, half_len, room, trim_len, protruding,
                         tuple(options), plan)
