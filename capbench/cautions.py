"""The cautions capbench shows wherever people can get hurt: one home for their text.

capbench computes fields and permittivities; it does not make a set-up safe. Every
output (command-line text and JSON, reports, the page) carries :data:`SHORT` or
:data:`ELECTRICAL`, and defers to local codes and licensed practice.
"""

from __future__ import annotations

from collections.abc import Iterable

#: the full electrical caution (reports, the page)
ELECTRICAL = (
    "Caution: capacitance bridges, LCR meters and test fixtures can carry high voltage, "
    "and the field at electrode edges can start partial discharge or breakdown in air "
    "and in specimens. Discharge and ground the electrodes before touching or changing a "
    "specimen. capbench computes fields and permittivities from an idealised geometry; it "
    "does not make a set-up safe. Follow your local electrical-safety codes, your "
    "laboratory's procedures and licensed practice for every energised measurement."
)

#: one line for the command line's text output and every JSON document's "caution"
SHORT = (
    "Caution: bench fixtures can carry high voltage; discharge and ground the electrodes "
    "before handling a specimen; follow local codes and licensed practice."
)

#: after an edge-field figure
EDGE = (
    "Fields at electrode edges can start partial discharge or breakdown. These figures "
    "are estimates from an ideal geometry; follow your local electrical-safety codes, "
    "your laboratory's procedures and licensed practice for every energised test."
)

#: the reference liquids' hazards (common practice, no source: the usual safety data
#: sheet classes; check the supplier's sheet and local rules before use)
FLUIDS = {
    "benzene": "benzene is a carcinogen and highly flammable: use a substitute where you "
    "can, else a fume hood and the protection your safety rules require",
    "cyclohexane": "cyclohexane is highly flammable and its vapour harmful: fume hood, no "
    "ignition sources",
    "n-hexane": "n-hexane is highly flammable and a nerve toxin with long exposure: fume "
    "hood, no ignition sources",
    "hexane": "hexane is highly flammable and a nerve toxin with long exposure: fume hood, "
    "no ignition sources",
    "toluene": "toluene is highly flammable and harmful to breathe: fume hood",
    "methanol": "methanol is flammable and toxic: fume hood, no skin contact",
    "ethanol": "ethanol is flammable: no ignition sources",
    "acetone": "acetone is highly flammable: no ignition sources",
}


def for_fluids(names: Iterable[str]) -> str:
    """The caution for the test liquids ``names`` ('' where none is hazardous), deferring
    to the supplier's safety data sheet and local rules."""
    parts = [FLUIDS[n.lower()] for n in names if n and n.lower() in FLUIDS]
    if not parts:
        return ""
    return (
        "Caution: "
        + "; ".join(dict.fromkeys(parts))
        + ". Follow the supplier's safety data sheet and your local rules."
    )
