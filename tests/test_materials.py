"""Materials table: densities against an independent reference library, aliases, weldability, shop tables."""

from pathlib import Path

import periodictable
import pytest

from toolkit import catalog
from toolkit.errors import BadInput, Infeasible
from toolkit.fabricate.materials import MATERIAL_SCHEMA, find, materials, require_weldable, resolve_density

ROOT = Path(__file__).resolve().parent.parent


def test_table_fingerprint():
    rows = materials()
    assert len(rows) == 17
    assert len({m.name for m in rows}) == 17
    # derived here (D): sum of the densities as typed in tables/materials.csv; an accidental edit fails
    assert sum(m.density_kg_m3 for m in rows) == pytest.approx(140120.0)
    assert all(m.source for m in rows)
    assert sum(m.weldable for m in rows) == 7  # carbon, low-alloy, 304, 316, 410, 6061, A356


# Nominal compositions (mass fractions): from memory, typical grade chemistry; the check asks only for
# agreement within 5 % (docs/methods.md §3), which nominal compositions easily resolve.
COMPOSITIONS = {
    "carbon steel": {"Fe": 0.985, "Mn": 0.01, "C": 0.002, "Si": 0.003},
    "low-alloy steel": {"Fe": 0.96, "Cr": 0.01, "Mo": 0.002, "Mn": 0.008, "Ni": 0.018, "C": 0.002},
    "stainless 304": {"Fe": 0.70, "Cr": 0.19, "Ni": 0.09, "Mn": 0.02},
    "stainless 316": {"Fe": 0.665, "Cr": 0.17, "Ni": 0.12, "Mo": 0.025, "Mn": 0.02},
    "stainless 410": {"Fe": 0.865, "Cr": 0.125, "Mn": 0.01},
    "aluminium 6061": {"Al": 0.975, "Mg": 0.01, "Si": 0.006, "Cu": 0.003, "Cr": 0.002, "Fe": 0.004},
    "aluminium 7075": {"Al": 0.90, "Zn": 0.056, "Mg": 0.025, "Cu": 0.016, "Cr": 0.003},
    "aluminium A356": {"Al": 0.92, "Si": 0.07, "Mg": 0.004, "Fe": 0.006},
    "copper": {"Cu": 1.0},
    "brass C36000": {"Cu": 0.615, "Zn": 0.355, "Pb": 0.03},
    "phosphor bronze C51000": {"Cu": 0.948, "Sn": 0.05, "P": 0.002},
    "titanium Ti-6Al-4V": {"Ti": 0.90, "Al": 0.06, "V": 0.04},
    "lead": {"Pb": 1.0},
    "tungsten": {"W": 1.0},
    "tungsten heavy alloy": {"W": 0.90, "Ni": 0.07, "Fe": 0.03},
}


def _mix_density(fractions):
    # derived here (D): 1/rho = sum w_i / rho_i, element densities from periodictable (CRC Handbook)
    return 1000.0 / sum(w / getattr(periodictable, el).density for el, w in fractions.items())


@pytest.mark.parametrize("name", sorted(COMPOSITIONS))
def test_density_against_periodictable(name):
    # periodictable package (CRC Handbook element densities); tolerance 5 % per docs/methods.md §3
    assert find(name).density_kg_m3 == pytest.approx(_mix_density(COMPOSITIONS[name]), rel=0.05)


def test_every_non_cast_iron_material_is_checked():
    names = {m.name for m in materials()}
    assert names - set(COMPOSITIONS) == {"grey cast iron", "ductile iron"}  # cast irons excluded (graphite)


def test_steel_and_aluminium_reference_rows():
    # derived here (D): steel against iron and aluminium alloy against aluminium, within 1 %
    # (periodictable package, CRC Handbook; EN 1993-1-1 3.2.6)
    assert find("steel").density_kg_m3 == pytest.approx(periodictable.Fe.density * 1000, rel=1e-2)
    assert find("6061").density_kg_m3 == pytest.approx(periodictable.Al.density * 1000, rel=1e-2)


@pytest.mark.parametrize("alias, name", [("S355", "carbon steel"), ("s 355", "carbon steel"),
                                         ("1.4301", "stainless 304"), ("42crmo4", "low-alloy steel"),
                                         ("EN-GJL-250", "grey cast iron"), ("6061-T6", "aluminium 6061")])
def test_aliases(alias, name):
    assert find(alias).name == name


def test_unknown_material_lists_known_names():
    with pytest.raises(BadInput, match=r"material: 'kryptonite' is not in the materials table; known: carbon"):
        find("kryptonite")


def test_density_needs_units_and_wins_over_material():
    with pytest.raises(BadInput, match="has no unit"):
        resolve_density(density=7850)
    with pytest.raises(BadInput, match="outside 100 to 25000|above the largest density read"):
        resolve_density(density="7850 g/cm^3")
    d = resolve_density("steel", "7800 kg/m^3")
    assert d.kg_m3 == 7800 and d.source == "given" and d.material.name == "carbon steel"
    assert resolve_density(density="0.2836 lb/in^3").kg_m3 == pytest.approx(7850, rel=1e-3)  # exact unit factors


def test_not_weldable_is_refused_with_another_method():
    with pytest.raises(Infeasible, match=r"ductile iron is marked not weldable .*use drilled holes \(drill\) or "
                                         r"bolt-on washers"):
        require_weldable(resolve_density("ductile iron"))
    require_weldable(resolve_density("S355"))  # weldable: no error


def test_shop_table_and_malformed_table(tmp_path):
    good = tmp_path / "shop.csv"
    good.write_text("name,aliases,density_kg_m3,weldable,notes,source\n"
                    "rotor steel X,RSX,7830,yes,,shop weighing 2026 (invented example)\n")
    assert find("rsx", str(good)).density_kg_m3 == 7830
    bad = tmp_path / "bad.csv"
    bad.write_text("name,aliases,density_kg_m3,weldable,notes,source\n"
                   "a,,7850,yes,,x\n"
                   "b,,7850,perhaps,,x\n")
    with pytest.raises(BadInput, match=r"bad.csv, line 3, column 'weldable': 'perhaps' is not yes or no"):
        materials(str(bad))
    dup = tmp_path / "dup.csv"
    dup.write_text("name,aliases,density_kg_m3,weldable,notes,source\na,x,7850,yes,,s\nb,x,7850,yes,,s\n")
    with pytest.raises(BadInput, match="alias 'x' is used by both 'a' and 'b'"):
        materials(str(dup))


def test_every_row_has_a_source_column():
    table = catalog.load("materials", MATERIAL_SCHEMA)
    assert "source" in table.columns


@pytest.mark.parametrize("contents, expected", [
    # derived here (D) by hand from the IIW formula (EN 1011-2 Annex C method A as reproduced, H)
    (dict(C=0.20, Mn=1.20), 0.40),
    (dict(C=0.40, Mn=0.75, Cr=1.0, Mo=0.2), 0.765),
    (dict(C=0.10, Mn=0.6, Ni=1.5, Cu=0.3), 0.32),
])
def test_carbon_equivalent(contents, expected):
    from toolkit.fabricate.materials import carbon_equivalent

    assert carbon_equivalent(**contents) == pytest.approx(expected, abs=1e-12)


def test_preheat_guidance_bands():
    # EN 1011-2 Annex C as reproduced (H): below about 0.35 no preheat, above 0.45 preheat and more
    from toolkit.fabricate.materials import preheat_guidance

    assert "normally no preheat" in preheat_guidance(0.34)
    assert "may be needed" in preheat_guidance(0.40)
    assert "post-weld heat treatment" in preheat_guidance(0.46)
    with pytest.raises(BadInput, match="ce: 7"):
        preheat_guidance(7)
