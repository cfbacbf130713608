"""Cost of a bath and the bill of materials of a plan.

Prices come from the catalogue (pack size, price, currency).  A bath whose ingredients are
priced in different currencies has no total (no exchange rates are assumed).

Examples
--------
>>> from trialkit.units import registry
>>> round(registry().Quantity(1, "US_gallon").to("L").magnitude, 9)
3.785411784
"""

from __future__ import annotations

import math
from dataclasses import dataclass

#: Litres in one US gallon (NIST SP 811, exact).
LITRES_PER_US_GALLON = 3.785411784


@dataclass(frozen=True)
class BathCost:
    """Cost of one bath; ``None`` values where a price is missing or currencies differ."""

    total: float | None
    currency: str | None
    per_l: float | None
    per_us_gal: float | None
    per_m2: float | None
    missing_prices: tuple[str, ...] = ()

    def to_dict(self) -> dict:
        d = dict(self.__dict__)
        d["missing_prices"] = list(self.missing_prices)
        return d


def bath_cost(line_costs: list[tuple[str, float | None, str | None]], volume_l: float,
              area_cm2: float | None = None) -> BathCost:
    """Total a bath from ``(ingredient, cost, currency)`` lines."""
    missing = tuple(name for name, c, _ in line_costs if c is None)
    currencies = {cur for _, c, cur in line_costs if c is not None}
    if len(currencies) > 1 or not currencies:
        return BathCost(None, None if not currencies else "mixed", None, None, None, missing)
    total = sum(c for _, c, _ in line_costs if c is not None)
    per_l = total / volume_l
    per_m2 = total / (area_cm2 / 1e4) if area_cm2 and area_cm2 > 0 else None
    return BathCost(total, currencies.pop(), per_l, per_l * LITRES_PER_US_GALLON, per_m2,
                    missing)


def packs_needed(grams: float, pack_grams: float | None) -> int | None:
    """Whole packs to buy for ``grams`` (``None`` when the pack mass is unknown)."""
    if not pack_grams or pack_grams <= 0:
        return None
    return max(1, math.ceil(grams / pack_grams - 1e-9))
