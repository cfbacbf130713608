"""Bath conditions at the bench against the plan: recorded pH and temperature.

Each bath's planned pH and temperature come from the trial's ``[bath]`` section (a factor
named in ``set_by``, else the section's ``target_ph`` and ``temperature``); the recorded
ones are the means of the bath's coupon readings ``bath_ph`` and ``bath_temperature_c``.
A bath further off than the ``[analysis]`` tolerances (pH 0.3, 2 °C by default) is listed.
"""

from __future__ import annotations

import pandas as pd

#: quantity -> (recorded field, [bath] attribute, set_by key, tolerance attribute, unit)
QUANTITIES = {
    "pH": ("bath_ph", "target_ph", "target_ph", "ph_tolerance", ""),
    "temperature": ("bath_temperature_c", "temperature_c", "temperature",
                    "temperature_tolerance", "°C"),
}
COLUMNS = ["bath", "quantity", "planned", "recorded", "difference", "tolerance", "unit"]


def bench_deviations(trial, baths: pd.DataFrame, current: pd.DataFrame | None,
                     config) -> pd.DataFrame:
    """Baths whose recorded pH or temperature is off the plan by more than the tolerance.

    ``baths``: the plan's bath table (factor columns); ``current``: the record log's
    current coupon readings (``bath`` plus the recorded fields); ``config``: the parsed
    ``[analysis]`` section.
    """
    section = (getattr(trial, "sections", None) or {}).get("bath")
    if current is None or section is None or not hasattr(section, "set_by"):
        return pd.DataFrame(columns=COLUMNS)
    rows = []
    plan = baths.astype({"bath": str}).set_index("bath")
    for quantity, (fname, attr, key, tol_attr, unit) in QUANTITIES.items():
        if fname not in current:
            continue
        recorded = (current.assign(bath=current["bath"].astype(str))
                    .groupby("bath")[fname].mean().dropna())
        factor = section.set_by.get(key)
        if factor is not None and factor in plan:
            planned = plan[factor]
        elif getattr(section, attr, None) is not None:
            planned = pd.Series(float(getattr(section, attr)), index=plan.index)
        else:
            continue
        planned = planned[~plan["point"].isin(["control", "reference"])].dropna()
        tol = float(getattr(config, tol_attr))
        for bath, value in recorded.items():
            if bath not in planned.index:
                continue
            diff = float(value) - float(planned[bath])
            if abs(diff) > tol:
                rows.append({"bath": bath, "quantity": quantity,
                             "planned": float(planned[bath]), "recorded": float(value),
                             "difference": diff, "tolerance": tol, "unit": unit})
    return pd.DataFrame(rows, columns=COLUMNS)
