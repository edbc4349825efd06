"""Materials of rotors and correction masses: density, weldability, notes and the source of each row.

The table is ``tables/materials.csv`` (columns ``name, aliases, density_kg_m3, weldable, notes, source``)
or a shop's own CSV with the same columns. Names and aliases (grade designations such as ``S355``,
``1.4301``, ``6061``) are matched without regard to case, spaces or hyphens.

Densities follow docs/methods.md §3 (EN 1993-1-1 3.2.6 for steels, EN 10088-1 for stainless, the CRC
Handbook for the elements); cast-iron densities vary between heats and are marked from memory. Weldability
is common practice, not a normative statement: the welding procedure and the rotor maker decide.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from types import MappingProxyType

from toolkit import catalog
from toolkit.errors import BadInput, Infeasible
from toolkit.units import magnitude

__all__ = ["Material", "MATERIAL_SCHEMA", "materials", "find", "resolve_density", "require_weldable",
           "carbon_equivalent", "preheat_guidance"]

MATERIAL_SCHEMA = {
    "name": catalog.text,
    "aliases": catalog.aliases,
    "density_kg_m3": catalog.number,
    "weldable": catalog.boolean,
    "notes": lambda cell: cell.strip(),
}


@dataclass(frozen=True)
class Material:
    """A material row: name, aliases, density [kg/m³], weldable, notes, source."""

    name: str
    density_kg_m3: float
    weldable: bool
    source: str
    aliases: tuple[str, ...] = ()
    notes: str = ""

    def to_dict(self) -> dict:
        return {"name": self.name, "aliases": list(self.aliases), "density_kg_m3": self.density_kg_m3,
                "weldable": self.weldable, "notes": self.notes, "source": self.source}


def _key(name: str) -> str:
    return re.sub(r"[\s_\-]+", "", str(name).lower())


def materials(table: str = "materials") -> tuple[Material, ...]:
    """All materials of the table (built-in ``"materials"`` or the path of a shop's CSV).

    >>> [m.name for m in materials()][:2]
    ['carbon steel', 'low-alloy steel']
    """
    return catalog.load_derived(table, MATERIAL_SCHEMA, _catalogue)[0]


def _catalogue(rows: catalog.Table, table) -> tuple[tuple[Material, ...], MappingProxyType]:
    """The table's materials and, by :func:`_key` of each name and alias, the first material carrying it
    (made once for the built-in table)."""
    out = tuple(Material(r["name"], r["density_kg_m3"], r["weldable"], r["source"], r["aliases"], r["notes"])
                for r in rows)
    seen: dict[str, Material] = {}
    for m in out:
        for label in (m.name, *m.aliases):
            k = _key(label)
            if k in seen and seen[k].name != m.name:
                raise BadInput(f"{table}: name or alias {label!r} is used by both {seen[k].name!r} and "
                               f"{m.name!r}")
            seen.setdefault(k, m)
    return out, MappingProxyType(seen)


def find(name: str, table: str = "materials") -> Material:
    """The material called ``name`` or carrying it as an alias.

    >>> find("S355").name, find("1.4301").density_kg_m3
    ('carbon steel', 7900.0)
    >>> find("unobtainium")
    Traceback (most recent call last):
    ...
    toolkit.errors.BadInput: material: 'unobtainium' is not in the materials table; known: carbon steel, ...
    """
    if not isinstance(name, str) or not name.strip():
        raise BadInput.about("material", f"{name!r} is not a material name; e.g. 'steel' or 'S355'")
    table_rows, by_key = catalog.load_derived(table, MATERIAL_SCHEMA, _catalogue)
    found = by_key.get(_key(name))
    if found is not None:
        return found
    raise BadInput.about("material", f"{name!r} is not in the materials table; known: "
                                     f"{', '.join(m.name for m in table_rows)} (or give a {{density}})",
                         mentions=("density",))


@dataclass(frozen=True)
class Density:
    """The density used for a calculation [kg/m³], the material it belongs to (if named) and its source."""

    kg_m3: float
    material: Material | None
    source: str = field(default="")

    @property
    def g_mm3(self) -> float:
        return self.kg_m3 * 1e-6

    def to_dict(self) -> dict:
        return {"density_kg_m3": self.kg_m3, "material": self.material.name if self.material else None,
                "density_source": self.source}


def resolve_density(material=None, density=None, table: str = "materials") -> Density:
    """The density to use: an explicit ``density`` (quantity or ``"7850 kg/m^3"``) wins over the table value
    of ``material``; one of the two is required.

    >>> resolve_density("steel").kg_m3, resolve_density(density="0.284 lb/in^3").kg_m3
    (7850.0, 7861.0...)
    >>> resolve_density()
    Traceback (most recent call last):
    ...
    toolkit.errors.BadInput: material: give a material name (e.g. 'steel') or a density ...
    """
    mat = find(material, table) if material is not None else None
    if density is not None:
        rho = magnitude(density, "density", "kg/m**3", "density", positive=True)
        if not 100 <= rho <= 25000:
            raise BadInput.about("density", f"{density!s} is outside 100 to 25000 kg/m³; check the unit")
        return Density(rho, mat, "given")
    if mat is None:
        raise BadInput.about("material", "give a material name (e.g. 'steel') or a density ({density}, e.g. "
                                         "'7850 kg/m^3')", mentions=("density",))
    return Density(mat.density_kg_m3, mat, mat.source)


def require_weldable(density: Density) -> None:
    """Refuse weld-on corrections on a material marked not weldable, suggesting another method.

    >>> require_weldable(resolve_density("grey cast iron"))
    Traceback (most recent call last):
    ...
    toolkit.errors.Infeasible: grey cast iron is marked not weldable (...); use drilled holes (drill) or bolt-on washers (washers) instead
    """
    m = density.material
    if m is not None and not m.weldable:
        raise Infeasible(f"{m.name} is marked not weldable ({m.notes or 'materials table'}); use drilled "
                         "holes (drill) or bolt-on washers (washers) instead")


def carbon_equivalent(C: float, Mn: float = 0.0, Cr: float = 0.0, Mo: float = 0.0, V: float = 0.0,
                      Ni: float = 0.0, Cu: float = 0.0) -> float:
    """IIW carbon equivalent CE = C + Mn/6 + (Cr + Mo + V)/5 + (Ni + Cu)/15, contents in mass per cent
    (EN 1011-2 Annex C, method A, as reproduced [H]). Valid for carbon and low-alloy steels.

    >>> round(carbon_equivalent(C=0.20, Mn=1.20), 3), round(carbon_equivalent(0.40, 0.75, Cr=1.0, Mo=0.2), 3)
    (0.4, 0.765)
    """
    values = {"C": C, "Mn": Mn, "Cr": Cr, "Mo": Mo, "V": V, "Ni": Ni, "Cu": Cu}
    for name, v in values.items():
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not 0 <= v <= 30:
            raise BadInput.about(name, f"{v!r} is not a content in per cent (0 to 30)")
    return C + Mn / 6 + (Cr + Mo + V) / 5 + (Ni + Cu) / 15


def preheat_guidance(ce: float) -> str:
    """Plain-words guidance for a carbon equivalent (EN 1011-2 Annex C as reproduced [H]): below about 0.35
    normally no preheat; above 0.45 preheat, low-hydrogen consumables and often post-weld heat treatment.

    >>> preheat_guidance(0.30)[:24], preheat_guidance(0.50)[:24]
    ('CE 0.30: normally no pre', 'CE 0.50: preheat, low-hy')
    """
    if isinstance(ce, bool) or not isinstance(ce, (int, float)) or not 0 <= ce <= 3:
        raise BadInput.about("ce", f"{ce!r} is not a carbon equivalent (0 to 3, e.g. 0.42)")
    if ce < 0.35:
        text = "normally no preheat"
    elif ce <= 0.45:
        text = "preheat may be needed depending on thickness and restraint"
    else:
        text = "preheat, low-hydrogen consumables and often post-weld heat treatment"
    return (f"CE {ce:.2f}: {text} (EN 1011-2 Annex C as reproduced [H]); the welding procedure decides")
