"""How much rust a bath can take up before its chelator is spent.

Moles of chelating compound per litre (each ingredient's ``fe_per_mol``, 1 for EDTA and
citrate at 1:1 complexation) give the iron a litre can hold, as g Fe and as g of rust
written as Fe2O3 or FeOOH, and the coupon area one bath can strip for an expected rust
mass per area.  Molar masses come from molmass.

Examples
--------
>>> c = capacity_from_moles(0.1, volume_l=2.0, rust_mg_per_cm2=5.0)
>>> round(c.g_fe_per_l, 3)
5.585
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

#: Expected rust mass per area when none is given, mg/cm² (an assumption to replace with
#: your own coupons' figure; a moderately rusted coupon -- common practice, no source).
DEFAULT_RUST_MG_PER_CM2 = 5.0


@lru_cache(maxsize=8)
def molar_mass(formula: str) -> float:
    """Molar mass (g/mol) from molmass."""
    import molmass

    return float(molmass.Formula(formula).mass)


@dataclass(frozen=True)
class Capacity:
    """Iron-holding capacity of a bath.

    Attributes
    ----------
    mol_chelator_per_l : float
        Moles of iron the bath's chelators hold per litre (1:1).
    g_fe_per_l, g_fe2o3_per_l, g_feooh_per_l : float
        The same as grams of iron, of Fe2O3 and of FeOOH per litre.
    rust_mg_per_cm2 : float
        Expected rust per coupon area (as FeOOH).
    strip_area_cm2 : float
        Coupon area one bath can strip before it is spent.
    """

    mol_chelator_per_l: float
    g_fe_per_l: float
    g_fe2o3_per_l: float
    g_feooh_per_l: float
    rust_mg_per_cm2: float
    strip_area_cm2: float

    def to_dict(self) -> dict:
        return dict(self.__dict__)


def capacity_from_moles(mol_per_l: float, *, volume_l: float,
                        rust_mg_per_cm2: float = DEFAULT_RUST_MG_PER_CM2) -> Capacity:
    """Capacity of ``volume_l`` litres holding ``mol_per_l`` of 1:1 chelator."""
    fe = molar_mass("Fe")
    g_fe = mol_per_l * fe
    g_fe2o3 = mol_per_l * molar_mass("Fe2O3") / 2.0
    g_feooh = mol_per_l * molar_mass("FeO2H")
    area = g_feooh * volume_l * 1000.0 / rust_mg_per_cm2 if rust_mg_per_cm2 > 0 else 0.0
    return Capacity(mol_per_l, g_fe, g_fe2o3, g_feooh, rust_mg_per_cm2, area)
