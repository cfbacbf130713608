"""Invented truth models behind simulated trials (demo data and self-consistency tests).

A truth model says what a bath *really* does, so that invented readings can be drawn
from it and an analysis can be checked against it.  Everything here is invented: the
shapes are this project's choices for teaching data, not findings about real baths.
Removal is fastest at a moderate chelator level, which is what the examples are built to
find; base-metal attack rises steeply in acid and is low near neutral, the shape of the
classic corrosion-rate-against-pH curve of iron in aerated water (Whitman, Russell &
Altieri 1924, from memory); the reference bath's speed relative to the best chelating
bath is a parameter of each scenario.

:class:`BathTruth` is a function of a bath's factor values (missing factors take the
model's baseline):

- rust coverage falls first order, ``coverage(t) = coverage(0) * exp(-k t)``, with

  ``ln k = ln k_peak - P(c) + s_pH (pH - pH_0) - (E_r / R) (1/T - 1/T_0)
  + e_surf [surfactant added] + e_agit [agitation periodic]``

  where ``P`` is the chelator peak (``c`` chelator in % w/v, a peak of width ``w`` at
  ``c_opt``): ``"rational"``, ``P = ln(1 + (c - c_opt)**2 / (2 w**2))``, long tails, so
  the time to 90 % removal is a parabola in ``c``; or ``"gaussian"``,
  ``P = (c - c_opt)**2 / (2 w**2)``, short tails, so the log of that time is one.
  ``T`` in kelvin, ``R`` = N_A k = 8.31446261815324 J/(mol K), exact in the SI;
  ``pH_0`` and ``T_0`` are the model's anchor, ``model_ph`` and ``model_temperature_c``;
- base-metal (witness) corrosion rate in mm/y,

  ``CR = (cr_0 + cr_acid / (1 + exp((pH - pH_half) / pH_scale))) * (1 + a_c c)
  * exp(-(E_c / R)(1/T - 1/T_0)) * exp(g_agit [agitation periodic])``.

Examples
--------
>>> t = BathTruth()
>>> round(t.rate_per_h({"chelator": 5.0}), 12) == t.peak_rate_per_h
True
>>> t.rate_per_h({"chelator": 15.0}) < t.rate_per_h({"chelator": 5.0})
True
>>> t.corrosion_mm_per_y({"ph": 4.0}) > 10 * t.corrosion_mm_per_y({"ph": 6.5})
True
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import asdict, dataclass, field, replace

import numpy as np

from trialkit.exceptions import TrialkitError

GAS_CONSTANT = 6.02214076e23 * 1.380649e-23  # J/(mol K): N_A k, both exact in the SI (2019)
ZERO_CELSIUS_K = 273.15
ROLES = ("chelator", "ph", "temperature", "surfactant", "agitation")
#: Units the model reads continuous factors in.
ROLE_UNITS = {"chelator": "% w/v", "ph": "pH", "temperature": "degC"}


class SimulationError(TrialkitError):
    """Invented readings cannot be simulated for this plan and truth model."""


@dataclass(frozen=True)
class NoiseModel:
    """Standard deviations of the invented variation (all zero: :meth:`off`).

    Log-scale SDs multiply a rate by ``exp(N(0, sd))``.  A coverage reading of true
    coverage ``c`` % has SD ``coverage_reading_sd_pct * sqrt(c (100 - c)) / 50``: the full
    SD at half coverage, less towards bare and fully rusted surfaces, which are easy to
    judge.  In a split-plot plan every bath of one tank run (whole plot) shares a shift of
    ln k (``whole_plot_log_rate_sd``) and an offset of the tank's real temperature from its
    set point (``whole_plot_temperature_sd_c``); both are 0 unless an example sets them.
    Readings are rounded to the
    stated resolutions (balance 0.1 mg, coverage 1 %, dimensions 0.01 mm, area 0.01 cm²,
    the last as ASTM G1 asks); a resolution of 0 means no rounding.
    """

    block_log_rate_sd: float = 0.08
    whole_plot_log_rate_sd: float = 0.0
    whole_plot_temperature_sd_c: float = 0.0
    bath_log_rate_sd: float = 0.10
    coupon_log_rate_sd: float = 0.08
    bath_log_corrosion_sd: float = 0.10
    coupon_log_corrosion_sd: float = 0.06
    coverage_reading_sd_pct: float = 2.0
    rust_mass_sd_rel: float = 0.08
    balance_sd_g: float = 0.0001
    dimension_sd_mm: float = 0.05
    ph_meter_sd: float = 0.05
    temperature_sd_c: float = 0.4
    balance_resolution_g: float = 0.0001
    coverage_resolution_pct: float = 1.0
    dimension_resolution_mm: float = 0.01
    area_resolution_cm2: float = 0.01

    @classmethod
    def off(cls) -> NoiseModel:
        """No variation and no rounding: readings equal the truth exactly."""
        return cls(**{k: 0.0 for k in cls.__dataclass_fields__})


@dataclass(frozen=True)
class BathTruth:
    """An invented truth model of a chelating derusting bath (see the module docstring).

    Attributes
    ----------
    name, description : str
    peak_rate_per_h : float
        First-order removal rate constant k (1/h) at the chelator optimum and baseline.
    chelator_optimum : float
        Chelator level (% w/v) of fastest removal, whatever the other factors.
    chelator_width : float
        Width w (% w/v) of the peak in chelator: the rate is half the peak rate at
        ``c_opt +- w*sqrt(2)`` (rational peak) or ``c_opt +- w*sqrt(2 ln 2)`` (gaussian).
    chelator_peak : str
        ``"rational"`` (long tails) or ``"gaussian"`` (short tails); see the module
        docstring.
    ph_log_slope : float
        d ln k / d pH (negative: more acidic baths clean faster).
    removal_activation_kj_per_mol, corrosion_activation_kj_per_mol : float
        Arrhenius activation energies of removal and of base-metal attack.
    surfactant_log_effect, agitation_log_effect : float
        Shift of ln k when surfactant is ``"added"`` / agitation is ``"periodic"``.
    base_corrosion_mm_per_y, acid_corrosion_mm_per_y, acid_ph_half, acid_ph_scale : float
        Corrosion-rate floor and the logistic acid term in pH.
    chelator_corrosion_per_pct : float
        Relative rise in attack per % w/v chelator.
    agitation_corrosion_log_effect, surfactant_corrosion_log_effect : float
        Shift of ln CR for the active level.
    model_ph, model_temperature_c : float
        Anchor of the model: ``peak_rate_per_h`` holds at this pH and temperature.
    baseline : dict
        Values of factors the trial does not vary (``chelator``, ``ph``, ``temperature``
        in degC, ``surfactant``, ``agitation``).
    reference_speedup : float
        Reference bath rate / rate at the chelator optimum and the baseline conditions.
    reference_corrosion_mm_per_y, reference_ph : float
    untreated_rate_per_h, untreated_corrosion_mm_per_y, untreated_ph : float
        The water-only control.
    rust_g_per_m2 : float
        Rust mass per area of fully rusted surface (g/m²).
    cleaning_residue_g_per_m2, cleaning_removal_per_cycle, cleaning_metal_loss_g_per_m2 :
        Loose residue on rusted coupons after the bath, the share of it each cleaning cycle
        removes, and the base metal each cycle removes (ASTM G1 repetitive cleaning).
    noise : NoiseModel
    """

    name: str = "invented chelating bath"
    description: str = ""
    peak_rate_per_h: float = 0.12
    chelator_optimum: float = 5.0
    chelator_width: float = 3.0
    chelator_peak: str = "rational"
    ph_log_slope: float = -0.25
    removal_activation_kj_per_mol: float = 40.0
    surfactant_log_effect: float = 0.0
    agitation_log_effect: float = 0.3
    base_corrosion_mm_per_y: float = 0.04
    acid_corrosion_mm_per_y: float = 1.5
    acid_ph_half: float = 4.5
    acid_ph_scale: float = 0.4
    chelator_corrosion_per_pct: float = 0.0
    corrosion_activation_kj_per_mol: float = 30.0
    agitation_corrosion_log_effect: float = 0.4
    surfactant_corrosion_log_effect: float = 0.0
    model_ph: float = 6.5
    model_temperature_c: float = 20.0
    baseline: dict = field(default_factory=lambda: {
        "chelator": 5.0, "ph": 6.5, "temperature": 20.0,
        "surfactant": "none", "agitation": "none"})
    reference_speedup: float = 3.0
    reference_corrosion_mm_per_y: float = 2.5
    reference_ph: float = 1.6
    untreated_rate_per_h: float = 0.0005
    untreated_corrosion_mm_per_y: float = 0.08
    untreated_ph: float = 7.2
    rust_g_per_m2: float = 150.0
    cleaning_residue_g_per_m2: float = 4.0
    cleaning_removal_per_cycle: float = 0.8
    cleaning_metal_loss_g_per_m2: float = 0.3
    noise: NoiseModel = field(default_factory=NoiseModel)

    # -- conditions ---------------------------------------------------------------------
    def conditions(self, values: Mapping) -> dict:
        """Fill missing factors from the baseline; refuse unknown or impossible ones."""
        unknown = [k for k in values if k not in ROLES]
        if unknown:
            raise SimulationError(
                f"the truth model {self.name!r} knows the factors {', '.join(ROLES)}; "
                f"got {', '.join(map(repr, unknown))}. Rename the trial's factors or pass "
                "a truth model that knows them.")
        out = dict(self.baseline)
        out.update({k: v for k, v in values.items()
                    if not (isinstance(v, float) and math.isnan(v))})
        if float(out["chelator"]) <= 0:
            raise SimulationError(f"chelator must be above 0 % w/v; got {out['chelator']}")
        for key, levels in (("surfactant", ("none", "added")),
                            ("agitation", ("none", "periodic"))):
            if out[key] not in levels:
                raise SimulationError(f"{key} must be one of {levels}; got {out[key]!r}")
        return out

    def without_noise(self) -> BathTruth:
        """The same model with :meth:`NoiseModel.off`."""
        return replace(self, noise=NoiseModel.off())

    def _arrhenius(self, temperature_c: float, kj_per_mol: float) -> float:
        t = float(temperature_c) + ZERO_CELSIUS_K
        t0 = self.model_temperature_c + ZERO_CELSIUS_K
        return math.exp(-kj_per_mol * 1e3 / GAS_CONSTANT * (1.0 / t - 1.0 / t0))

    # -- expected responses -------------------------------------------------------------
    def rate_per_h(self, values: Mapping) -> float:
        """First-order removal rate constant k (1/h)."""
        x = self.conditions(values)
        log_k = (math.log(self.peak_rate_per_h) - self._chelator_penalty(x["chelator"])
                 + self.ph_log_slope * (float(x["ph"]) - self.model_ph)
                 + self.surfactant_log_effect * (x["surfactant"] == "added")
                 + self.agitation_log_effect * (x["agitation"] == "periodic"))
        return math.exp(log_k) * self._arrhenius(x["temperature"],
                                                 self.removal_activation_kj_per_mol)

    def _chelator_penalty(self, chelator) -> float:
        """``P(c)``: how far ln k falls below the peak at chelator level ``c``."""
        u2 = (float(chelator) - self.chelator_optimum) ** 2 / (2.0 * self.chelator_width ** 2)
        if self.chelator_peak == "rational":
            return math.log1p(u2)
        if self.chelator_peak == "gaussian":
            return u2
        raise SimulationError(f"chelator_peak must be 'rational' or 'gaussian'; got "
                              f"{self.chelator_peak!r}")

    def corrosion_mm_per_y(self, values: Mapping) -> float:
        """Base-metal corrosion rate of a bare (witness) coupon, mm/y."""
        x = self.conditions(values)
        acid = self.acid_corrosion_mm_per_y / (
            1.0 + math.exp((float(x["ph"]) - self.acid_ph_half) / self.acid_ph_scale))
        return ((self.base_corrosion_mm_per_y + acid)
                * (1.0 + self.chelator_corrosion_per_pct * float(x["chelator"]))
                * self._arrhenius(x["temperature"], self.corrosion_activation_kj_per_mol)
                * math.exp(self.agitation_corrosion_log_effect * (x["agitation"] == "periodic")
                           + self.surfactant_corrosion_log_effect
                           * (x["surfactant"] == "added")))

    def time_to_90_h(self, values: Mapping) -> float:
        """Hours until 90 % of the rust is gone: ln(10) / k."""
        return math.log(10.0) / self.rate_per_h(values)

    def removal_pct(self, values: Mapping, hours: float) -> float:
        """Expected share of the rust removed after ``hours``: 100 (1 - exp(-k t))."""
        return 100.0 * (1.0 - math.exp(-self.rate_per_h(values) * hours))

    def control(self, kind: str) -> tuple[float, float]:
        """(rate 1/h, corrosion mm/y) of the ``"untreated"`` or ``"reference"`` bath."""
        if kind == "untreated":
            return self.untreated_rate_per_h, self.untreated_corrosion_mm_per_y
        if kind == "reference":
            return (self.reference_speedup
                    * self.rate_per_h({"chelator": self.chelator_optimum}),
                    self.reference_corrosion_mm_per_y)
        raise SimulationError(f"control kind must be 'untreated' or 'reference'; got {kind!r}")

    # -- facts for the tests ------------------------------------------------------------
    def real_effects(self, factor_names) -> dict[str, list[str]]:
        """Which of ``factor_names`` really change removal rate and corrosion rate."""
        rate = {"chelator": True, "ph": self.ph_log_slope != 0,
                "temperature": self.removal_activation_kj_per_mol != 0,
                "surfactant": self.surfactant_log_effect != 0,
                "agitation": self.agitation_log_effect != 0}
        corr = {"chelator": self.chelator_corrosion_per_pct != 0, "ph": True,
                "temperature": self.corrosion_activation_kj_per_mol != 0,
                "surfactant": self.surfactant_corrosion_log_effect != 0,
                "agitation": self.agitation_corrosion_log_effect != 0}
        names = list(factor_names)
        return {"removal": [n for n in names if rate.get(n)],
                "corrosion": [n for n in names if corr.get(n)]}

    def removal_optimum(self) -> dict:
        """Where removal is fastest: the chelator optimum (other factors: see ph slope)."""
        return {"chelator": self.chelator_optimum}

    def best_on_grid(self, bounds: Mapping[str, tuple[float, float]], score, *,
                     fixed: Mapping | None = None, points: int = 301) -> dict:
        """Maximise ``score(truth, conditions)`` over a grid of ``bounds`` (2 factors max).

        Returns the best conditions and the score there.
        """
        names = list(bounds)
        if not 1 <= len(names) <= 2:
            raise SimulationError(f"best_on_grid takes 1 or 2 factors; got {names}")
        axes = [np.linspace(lo, hi, points) for lo, hi in bounds.values()]
        grids = np.meshgrid(*axes, indexing="ij")
        best, best_x = -math.inf, None
        for idx in np.ndindex(grids[0].shape):
            x = dict(fixed or {})
            x.update({n: float(g[idx]) for n, g in zip(names, grids, strict=True)})
            s = float(score(self, x))
            if s > best:
                best, best_x = s, x
        return {"conditions": best_x, "score": best}

    def to_dict(self) -> dict:
        """All parameters as plain data (JSON-ready)."""
        return asdict(self)


def one_sided_desirability(value: float, lower: float, upper: float, aim: str) -> float:
    """Derringer & Suich (1980) one-sided desirability with weight 1 (linear ramp)."""
    if aim == "higher":
        d = (value - lower) / (upper - lower)
    elif aim == "lower":
        d = (upper - value) / (upper - lower)
    else:
        raise SimulationError(f"aim must be higher or lower; got {aim!r}")
    return float(min(1.0, max(0.0, d)))


@dataclass(frozen=True)
class ExampleScenario:
    """An invented example trial: its truth model and how its readings were drawn."""

    folder: str
    truth: BathTruth
    seed: int
    immersion_h: float
    inspections_h: tuple[float, ...] = ()
    confirmation_recipe: dict = field(default_factory=dict)
    confirmation_baths: int = 0
    confirmation_seed: int = 0


#: The invented truth models of the folders in ``example_trials/`` (one chemistry: the
#: same rate and attack laws; each trial fixes the factors it does not vary).
EXAMPLES: dict[str, ExampleScenario] = {
    "chelator-sweep": ExampleScenario(
        folder="chelator-sweep",
        truth=BathTruth(
            name="chelator sweep (invented)",
            description="pH 7.0, 22 degC, no surfactant, no agitation; only the chelator "
                        "level varies; a short-tailed (gaussian) peak at 4.6 % w/v",
            peak_rate_per_h=0.15, chelator_optimum=4.6, chelator_width=3.0,
            chelator_peak="gaussian", reference_speedup=3.0,
            baseline={"chelator": 4.6, "ph": 7.0, "temperature": 22.0,
                      "surfactant": "none", "agitation": "none"}),
        seed=8201, immersion_h=72.0, inspections_h=(4.0, 8.0, 16.0, 24.0, 48.0, 72.0)),
    "five-factor-screen": ExampleScenario(
        folder="five-factor-screen",
        truth=BathTruth(
            name="five-factor screen (invented)",
            description="chelator (peak at 5 % w/v), pH, temperature and agitation change "
                        "removal; pH, temperature and agitation change attack; surfactant "
                        "changes nothing",
            baseline={"chelator": 4.0, "ph": 6.5, "temperature": 30.0,
                      "surfactant": "none", "agitation": "none"}),
        seed=8105, immersion_h=8.0, inspections_h=(1.0, 2.0, 4.0, 8.0)),
    "surface-follow-up": ExampleScenario(
        folder="surface-follow-up",
        truth=BathTruth(
            name="chelator-pH surface (invented)",
            description="25 degC, surfactant added (no effect), no agitation; chelator and "
                        "pH vary",
            baseline={"chelator": 5.0, "ph": 6.0, "temperature": 25.0,
                      "surfactant": "added", "agitation": "none"}),
        seed=8103, immersion_h=8.0,
        confirmation_recipe={"chelator": 5.0, "ph": 6.1}, confirmation_baths=3,
        confirmation_seed=8104),
    "tank-split-plot": ExampleScenario(
        folder="tank-split-plot",
        truth=BathTruth(
            name="tank temperature split plot (invented)",
            description="pH 6.5, no agitation; temperature is set per heated tank (two "
                        "tanks a day), chelator and surfactant per bath; tanks differ "
                        "by more than baths in one tank do",
            baseline={"chelator": 4.0, "ph": 6.5, "temperature": 30.0,
                      "surfactant": "none", "agitation": "none"},
            noise=NoiseModel(whole_plot_log_rate_sd=0.12, whole_plot_temperature_sd_c=0.8)),
        seed=8301, immersion_h=8.0, inspections_h=(2.0, 4.0, 8.0)),
}


def surface_desirability(truth: BathTruth, x: Mapping, *, hours: float = 8.0) -> float:
    """Overall desirability of the surface example's removal and attack aims (no cost).

    Geometric mean of the one-sided desirabilities of removal after ``hours`` (aim higher,
    50..90 %) and corrosion rate (aim lower, 0.05..0.30 mm/y), as in its trial file.
    """
    d1 = one_sided_desirability(truth.removal_pct(x, hours), 50.0, 90.0, "higher")
    d2 = one_sided_desirability(truth.corrosion_mm_per_y(x), 0.05, 0.30, "lower")
    return math.sqrt(d1 * d2)
