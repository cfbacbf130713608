"""Trial-file keys and values that trialkit no longer reads, with the name that replaced each.

An old trial file that uses one of them is refused with a one-line migration hint naming
the new key or value, never silently accepted.  The vocabulary test reads these tables to
check that none of the retired names comes back into the public vocabulary.

Examples
--------
>>> retired_key_hint("response", "importance")
'renamed: write priority = <relative weight> instead of importance'
>>> retired_key_hint("response", "unit") is None
True
"""

from __future__ import annotations

#: (section, retired key) -> what to write instead.  ``section`` is the trial file's
#: table (``response`` for ``[[response]]``) or, for ``[design]`` options, the design kind.
RETIRED_KEYS: dict[tuple[str, str], str] = {
    ("response", "goal"): 'aim = "higher" | "lower" | "on-target" | "record-only"',
    ("response", "lower"): ("unacceptable = <value> (aim higher) or satisfactory = <value> "
                            "(aim lower)"),
    ("response", "upper"): ("satisfactory = <value> (aim higher) or unacceptable = <value> "
                            "(aim lower)"),
    ("response", "target"): 'ideal = <value> with aim = "on-target"',
    ("response", "weight"): "shape = <exponent of the desirability curve>",
    ("response", "importance"): "priority = <relative weight>",
    ("optimal", "disallow"): "cannot_mix = [{factor = value, ...}, ...]",
    ("optimal", "augment"): 'runs_done = "<earlier plan.csv>"',
    ("optimal", "fixed"): "keep_runs = [{factor = value, ...}, ...]",
    ("optimal", "starts"): "tries = <number of random starts>",
    ("latin-hypercube", "criterion"): ('spread = "cell-centres" | "widest-gaps" | "centred-gaps" | '
                              '"least-correlated"'),
}

#: (section.key, retired value) -> the value to write instead.
RETIRED_VALUES: dict[tuple[str, str], str] = {
    ("response.aim", "maximize"): "higher",
    ("response.aim", "minimize"): "lower",
    ("response.aim", "target"): "on-target",
    ("response.aim", "none"): "record-only",
    ("design.spread", "center"): "cell-centres",
    ("design.spread", "maximin"): "widest-gaps",
    ("design.spread", "centermaximin"): "centred-gaps",
    ("design.spread", "correlation"): "least-correlated",
}


def retired_key_hint(section: str, key: str) -> str | None:
    """The migration hint for a retired ``key`` of ``section``, or ``None``."""
    new = RETIRED_KEYS.get((section, key))
    return None if new is None else f"renamed: write {new} instead of {key}"


def retired_value_hint(where: str, value: object) -> str | None:
    """The migration hint for a retired ``value`` of key ``where`` (``section.key``)."""
    new = RETIRED_VALUES.get((where, str(value)))
    return None if new is None else f'renamed: write "{new}" instead of "{value}"'
