"""Write tests/cases/field_cases.json: reference capacitances from outside the project.

Run from the repository root: python tests/cases/make_field_cases.py
Each case has a readable id, the fixture parameters, the reference value, the source.
"""

from __future__ import annotations

import json
import pathlib
import sys

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[1]))
import references as ref

A = 0.025  # disc radius, m
CASES = []
for kappa in (0.02, 0.05, 0.1, 0.2, 0.5, 1.0, 2.0, 5.0):
    c1 = ref.love_discs(kappa)
    c2 = ref.love_discs(kappa, panel_width=min(kappa, 0.5) / 2, order=20)
    assert abs(c1 - c2) <= 1e-12 * c1, (kappa, c1, c2)  # two resolutions agree
    CASES.append(
        {
            "id": f"love-discs-d_a-{kappa:g}",
            "kind": "equal_thin_discs",
            "radius": A,
            "gap": kappa * A,
            "capacitance": c1 * ref.EPS0 * A,
            "source": "E. R. Love, Q. J. Mech. Appl. Math. 2, 428 (1949): integral equation "
            "solved by Nystrom (tests/references.py)",
        }
    )
CASES += [
    {
        "id": "isolated-disc",
        "kind": "isolated_disc",
        "radius": 0.02,
        "capacitance": ref.isolated_disc(0.02),
        "source": "C = 8 eps0 a, potential theory",
    },
    {
        "id": "isolated-sphere",
        "kind": "isolated_sphere",
        "radius": 0.02,
        "capacitance": ref.isolated_sphere(0.02),
        "source": "C = 4 pi eps0 a, textbook",
    },
    {
        "id": "concentric-spheres",
        "kind": "concentric_spheres",
        "inner": 0.02,
        "outer": 0.05,
        "capacitance": ref.concentric_spheres(0.02, 0.05),
        "source": "C = 4 pi eps0 a b / (b - a), textbook",
    },
    {
        "id": "coaxial-cylinders",
        "kind": "coaxial_cylinders",
        "inner": 0.02,
        "outer": 0.05,
        "capacitance": ref.coaxial_cylinders(0.02, 0.05),
        "source": "C' = 2 pi eps0 / ln(b / a), textbook",
    },
    {
        "id": "sphere-over-plane-D_R-1.5",
        "kind": "sphere_over_plane",
        "radius": 0.02,
        "height": 0.03,
        "capacitance": ref.sphere_over_plane(0.02, 0.03),
        "source": "image-charge series (Smythe; section from memory)",
    },
    {
        "id": "sphere-over-plane-D_R-1.1",
        "kind": "sphere_over_plane",
        "radius": 0.02,
        "height": 0.022,
        "capacitance": ref.sphere_over_plane(0.02, 0.022),
        "source": "image-charge series (Smythe; section from memory)",
    },
]

if __name__ == "__main__":
    out = pathlib.Path(__file__).with_name("field_cases.json")
    out.write_text(json.dumps(CASES, indent=1) + "\n")
    print(f"wrote {len(CASES)} cases to {out}")
