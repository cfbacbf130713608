"""Figures: draw result objects.  The only folder that imports matplotlib.

Holds the figure functions (``plots``), their look (``style``), output to PNG, SVG and
files (``output``) and the numbers each figure shows, read off the results
(``views``, ``surface_views``).

May import: ``trialkit.analysis`` and the stages before it; never ``trialkit.report``.
"""
