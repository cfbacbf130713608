"""Responses: the standard numbers computed from the recorded readings.

Holds metal densities (``materials``), ASTM G1 corrosion rates and cleaning corrections
(``corrosion``), ASTM D610 rust grades (``rust_grade``), removal curves over time
(``kinetics``; every bath's, its coupons as replicates: ``bath_kinetics``), the measures a
trial may name (``definitions``), which coverage readings they use, hand or photo
(``coverage_source``), and the per-coupon and per-bath responses of a trial
(``compute``).

May import: ``trialkit.records``, ``trialkit.chemistry``, ``trialkit.planning``,
``trialkit.trial`` and the shared modules.
"""
