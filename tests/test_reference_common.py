"""Normal boiling points of famous solvents on the common list against a handbook.

Source: CRC Handbook of Chemistry and Physics (Haynes, ed., CRC Press), table "Physical
Constants of Organic Compounds", normal boiling points, from memory (rounded to 0.1 °C).
Tolerance 2 °C: it covers the rounding and editions of remembered values; a wrong CAS on
the list or a wrong value in the table is usually off by much more.

Some library values come from chemicals' own copy of that CRC table (``CRC_ORG`` in
``sources``), so for those this is a check of the build (and of the CAS numbers on the
list), not an independent measurement; others come from the CoolProp equations of state
(``HEOS``), which are independent of it.
"""

from __future__ import annotations

import pytest

from solsphere.library.pools import common_cas
from solsphere.library.table import load_library

# name -> normal boiling point [°C], CRC Handbook of Chemistry and Physics, from memory
CRC_BOILING_POINTS = {
    "methanol": 64.6, "ethanol": 78.3, "acetone": 56.1, "toluene": 110.6,
    "ethyl acetate": 77.1, "n-hexane": 68.7, "dichloromethane": 40.0, "chloroform": 61.2,
    "acetonitrile": 81.6, "1-butanol": 117.7, "cyclohexane": 80.7, "heptane": 98.4,
    "isopropanol": 82.3, "MEK": 79.6, "THF": 65.0, "DMF": 153.0,
}



@pytest.mark.parametrize("name", sorted(CRC_BOILING_POINTS))
def test_boiling_point_matches_the_handbook(lib, name):
    s = lib.lookup(name)
    assert s.cas in common_cas(), f"{name} should be on the common list"
    assert s.boiling_point == pytest.approx(CRC_BOILING_POINTS[name], abs=2.0), name


@pytest.mark.xfail(strict=True, reason="known doubt: the table has 191.9 °C (CRC_ORG in "
                   "chemicals) against 189 °C usually quoted for DMSO (from memory); "
                   "reported, not corrected by hand (solvents.csv is generated)")
def test_dmso_boiling_point(lib):
    assert lib.lookup("DMSO").boiling_point == pytest.approx(189.0, abs=2.0)
