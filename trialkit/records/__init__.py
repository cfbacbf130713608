"""Records: what is written down at the bench, and the record log that keeps it.

Holds the entry fields (``fields``), the trial's recording settings from its ``[sheet]``
section (``config``), the append-only record log (``log``) with its hash chain
(``chain``), and the recording sheets with
their checked ingest (``sheets``).  The record log knows no sheets: ``log``, ``chain``,
``fields`` and ``config`` never import ``sheets``.

May import: ``trialkit.chemistry``, ``trialkit.planning``, ``trialkit.trial`` and the
shared modules.
"""
