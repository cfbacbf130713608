"""Trial-file texts shared by the tests (invented examples, not measurements).

:func:`trial_text` puts a trial file together from named factor blocks, so that test
files do not each carry their own copy of the same factors.

Examples
--------
>>> text = trial_text("chelator", "ph", layout="replicates = 2")
>>> text.count("[[factor]]"), "kind = \\"full-factorial\\"" in text
(2, True)
"""

from __future__ import annotations

#: ``[[factor]]`` blocks by name (ranges of the invented examples).
FACTORS = {
    "chelator": '[[factor]]\nname = "chelator"\nunit = "% w/v"\nlow = 2\nhigh = 10\n',
    "ph": '[[factor]]\nname = "ph"\nlow = 5.5\nhigh = 7.5\n',
    "temperature": '[[factor]]\nname = "temperature"\nunit = "degC"\nlow = 20\nhigh = 40\n',
    "surfactant": '[[factor]]\nname = "surfactant"\nlevels = ["none", "added"]\n',
    "agitation": '[[factor]]\nname = "agitation"\nunit = "rpm"\nlow = 0\nhigh = 200\n',
}


def trial_text(*factors: str, title: str = "Chelator and pH, invented example",
               seed: int = 5, notes: str = "", design: str = 'kind = "full-factorial"',
               layout: str = "", extra: str = "") -> str:
    """A trial file with the named factors (keys of :data:`FACTORS`), in that order.

    ``design`` and ``layout`` are the bodies of the ``[design]`` and ``[layout]``
    sections; ``extra`` is appended as written (responses, other sections).
    """
    head = f'[trial]\ntitle = "{title}"\nseed = {seed}\n'
    if notes:
        head += f'notes = "{notes}"\n'
    body = "".join(FACTORS[name] for name in factors)
    return (f"{head}{body}[design]\n{design}\n[layout]\n{layout}\n{extra}").rstrip() + "\n"
