"""Safety cautions printed with every recipe and mixing sheet.

The texts are the usual cautions of the trade; they defer to the safety data sheets,
local codes and licensed practice.
"""

from __future__ import annotations

GENERAL = (
    "Wear eye protection (splash goggles) and chemical-resistant gloves while weighing, "
    "mixing and handling baths; rinse splashes on skin or eyes with plenty of water.",
    "Read the safety data sheet of every ingredient before use; it, your local codes and "
    "licensed practice take precedence over this sheet.",
    "Work with good ventilation.",
    "Spent baths hold dissolved iron and other metals: dispose of them per local "
    "regulations and the safety data sheets, never simply down the drain.",
    "Predicted pH values are model estimates: confirm every bath with a calibrated pH meter.",
)

#: The caution line CSV outputs (mixing sheet, recording sheets) carry above their
#: tables: one cell with no comma or semicolon, so that a spreadsheet program set to
#: either separator keeps it whole in the first column.
CSV_CAUTION = ("# CAUTION: wear eye protection and chemical-resistant gloves. Acid on steel "
               "gives off hydrogen: vent it and keep flames away. Dispose of spent baths "
               "holding dissolved metals as local rules require. The safety data sheets as "
               "well as local codes and licensed practice take precedence over this file.")

BY_HAZARD = {
    "alkaline": "Alkaline solid and bath: irritating to eyes and skin; keep away from "
                "aluminium, zinc and galvanised parts.",
    "corrosive_base": "Sodium hydroxide is corrosive and heats water as it dissolves: add "
                      "it slowly to cold water while stirring, never water onto the solid.",
    "acidic": "Acidic solid or liquid: acid baths attack steel and release hydrogen -- "
              "never keep an acid bath with steel in a closed container; leave it vented, "
              "away from flames and sparks.",
    "oxidiser": "Oxidiser: keep away from organic material and reducing agents.",
    "irritant": "Irritant: avoid breathing dust or mist.",
    "toxic": "Harmful if swallowed: label containers, keep away from food and children.",
}


#: Above this a bath counts as heated (room temperature; common practice).
ROOM_TEMPERATURE_C = 25.0
HEATED = ("Heated bath: hot solution scalds, so heat it in a controlled way (a thermostatic "
          "water bath or heater, never an open flame under a plastic tank), expect more "
          "fumes and ventilate well, and mark the level: evaporation concentrates the bath, "
          "so top it up with water to the mark.")


def cautions_for(hazards: set[str] | list[str], *, acidic_bath: bool = False,
                 temperature_c: float | None = None) -> list[str]:
    """Cautions for a bath whose ingredients carry ``hazards``, at ``temperature_c``.

    Only the hazards given are warned about (a bath without acid gets no acid caution);
    a bath warmer than :data:`ROOM_TEMPERATURE_C` gets the heated-bath caution; the
    general cautions (protection, safety data sheets, ventilation, disposal of spent
    baths, pH meter) always follow.

    Examples
    --------
    >>> any("hydrogen" in c for c in cautions_for(["acidic"]))
    True
    >>> any("hydrogen" in c for c in cautions_for(["alkaline"]))
    False
    >>> any(c.startswith("Heated bath") for c in cautions_for([], temperature_c=40))
    True
    """
    keys = set(hazards)
    if acidic_bath:
        keys.add("acidic")
    out = [BY_HAZARD[k] for k in BY_HAZARD if k in keys]
    if temperature_c is not None and float(temperature_c) > ROOM_TEMPERATURE_C:
        out.append(HEATED)
    return out + list(GENERAL)
