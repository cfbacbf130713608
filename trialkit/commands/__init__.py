"""One module a sub-command of the ``trialkit`` command line (see :mod:`trialkit.cli`).

Shared helpers for printing live in :mod:`trialkit.commands._output`.
"""
