"""Planning: from a trial to the plan of baths and coupons, and what that plan can detect.

Holds the design catalogue (``designs``), the plan (``plan``), power and efficiency
(``power``), design evaluation (``design_evaluation``, ``evaluation``,
``evaluation_config``) and the comparison of candidate plans (``comparison``).

May import: ``trialkit.trial`` and the shared modules (exceptions, problems, units).
"""
