"""The bundled examples: invented truths, invented readings and ``trialkit demo``.

Holds the invented truth models (``truth_models``), the readings drawn from them
(``simulate``), the writer of the example folders (``examples``), the filling of exported
sheets (``fill``), the demo itself (``run``) with its result (``result``) and key findings
(``findings``), and invented coupon photos with a known rusted area
(``photo_scenes``).  Outside the analysis path: no other stage imports it.

May import: every stage (it runs the whole loop).
"""
