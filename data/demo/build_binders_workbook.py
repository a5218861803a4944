"""Write three_binders.xlsx: an invented bench workbook of three fictional binders.

Invented data, not measurements: each binder is a made-up sphere (centre and radius
below); each solvent of the panel is scored on Hansen's 1–6 visual scale from its RED to
that sphere (RED < 0.8 → 1, < 1.0 → 2, < 1.1 → 3, < 1.25 → 4, < 1.5 → 5, else 6), so the
file looks like a lab's workbook: a 'Bench' sheet with a material column, lab headers
(Material, Solvent, Result, Comments) and a 'Notes' sheet in front of it.

    python data/demo/build_binders_workbook.py   # needs openpyxl
"""

from __future__ import annotations

from pathlib import Path

import openpyxl

from solsphere import hansen
from solsphere.library.table import load_library

HERE = Path(__file__).resolve().parent
# invented binders: (name, centre dD, dP, dH [MPa½], R0 [MPa½])
BINDERS = [("BX-7 varnish binder", (17.5, 6.5, 8.5), 7.5),
           ("PU-3 dispersion resin", (18.0, 10.5, 9.0), 6.5),
           ("AC-12 acrylic", (16.8, 8.0, 5.0), 6.0)]
PANEL = ["toluene", "xylene", "acetone", "2-butanone", "ethyl acetate", "n-butyl acetate",
         "ethanol", "2-propanol", "1-butanol", "methanol", "water", "n-hexane",
         "cyclohexane", "dichloromethane", "tetrahydrofuran", "dimethyl sulfoxide",
         "n,n-dimethylformamide", "propylene carbonate", "ethyl lactate",
         "1-methoxy-2-propyl acetate", "diacetone alcohol", "n-heptane"]


def score(red: float) -> int:
    for k, top in enumerate((0.8, 1.0, 1.1, 1.25, 1.5), 1):
        if red < top:
            return k
    return 6


def main() -> None:
    lib = load_library()
    wb = openpyxl.Workbook()
    notes = wb.active
    notes.title = "Notes"
    notes.append(["Invented demo data for solsphere: three fictional binders, scored on "
                  "Hansen's 1-6 scale (1 soluble ... 6 no visible effect). Not measurements."])
    ws = wb.create_sheet("Bench")
    ws.append(["Material", "Solvent", "Result", "Comments"])
    for name, centre, r0 in BINDERS:
        for solvent in PANEL:
            s = lib.lookup(solvent)
            red = float(hansen.ra([s.point], centre)[0] / r0)
            ws.append([name, solvent, score(red), "24 h, 25 °C"])
    wb.save(HERE / "three_binders.xlsx")
    print(f"wrote {HERE / 'three_binders.xlsx'}")


if __name__ == "__main__":
    main()
