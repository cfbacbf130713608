"""The trial: what the trial file says, checked.

Holds the factors (``factors``), the trial and its parts as plain data (``spec``), the
trial-file reader (``file``, with ``section_checks`` and ``coupon_checks``), the limits and
whole-file checks (``limits``: finite numbers, shallow nesting, clean text, bounded
counts), coupon geometry (``geometry``), the
model grammar and model matrices (``model_grammar``, ``model_matrix``) and the retired
names (``retired_names``).

May import: ``trialkit.exceptions``, ``trialkit.problems``, ``trialkit.units``.  Sections
of the trial file that later stages own are parsed through names looked up at load time
(``file.SECTION_PARSERS``, ``file.DESIGN_CHECKER``), never imported here.
"""
