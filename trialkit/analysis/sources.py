"""Where the analysis gets its table: a trial folder or a plain CSV/XLSX table.

A trial folder gives the factors (with their ranges), the responses (name -> measured
column ``<measure>_mean`` of the bath table), the ``[analysis]`` options and the seed;
the bath table comes from the record log through :func:`trialkit.responses.compute.load_responses`.
A plain table gives only columns: factors are named on the command line.  Text cells are
kept as text so that response values reach the exact decimal shift unrounded.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from trialkit.analysis.config import AnalysisConfig
from trialkit.exceptions import AnalysisError
from trialkit.problems import did_you_mean
from trialkit.trial.factors import Factor


@dataclass
class AnalysisSource:
    """A table to analyse with what is known about it.

    Attributes
    ----------
    table : DataFrame
    factors : tuple of Factor (empty for plain tables until named)
    responses : dict
        Response name -> column name in ``table`` (trial folders only).
    aims : dict
        Response name -> "higher" / "lower" / "on-target" / "record-only" (trial folders
        only).
    config : AnalysisConfig
    seed : int
    """

    table: pd.DataFrame
    factors: tuple[Factor, ...] = ()
    responses: dict = field(default_factory=dict)
    aims: dict = field(default_factory=dict)
    config: AnalysisConfig = field(default_factory=AnalysisConfig)
    seed: int = 0
    origin: str = ""
    specs: tuple = ()

    def aims_with_limits(self) -> list:
        """Derringer–Suich aims of the trial's responses whose limits the trial file gives."""
        from trialkit.analysis.desirability import aim_from_spec

        return [aim_from_spec(r, self.responses[r.name]) for r in self.specs
                if r.is_wanted and r.has_limits]


def read_table(path: str | Path) -> pd.DataFrame:
    """Read a CSV or XLSX table; cells kept as text (CSV) or as stored (XLSX)."""
    p = Path(path)
    if not p.exists():
        raise AnalysisError(f"{p}: no such file or folder")
    suffix = p.suffix.lower()
    try:
        if suffix in (".xlsx", ".xlsm"):
            table = pd.read_excel(p, dtype=object)
        elif suffix in (".csv", ".txt", ".tsv"):
            table = pd.read_csv(p, dtype=str, sep=None, engine="python",
                                keep_default_na=True)
        else:
            raise AnalysisError(f"{p}: a table must be .csv or .xlsx (got {suffix or 'none'});"
                                " or give a trial folder")
    except (ValueError, OSError, pd.errors.ParserError) as exc:
        if isinstance(exc, AnalysisError):
            raise
        raise AnalysisError(f"{p}: cannot read the table ({exc})") from None
    table.columns = [str(c).strip() for c in table.columns]
    if table.empty:
        raise AnalysisError(f"{p}: the table has no rows")
    return table


def from_trial_folder(folder: str | Path) -> AnalysisSource:
    """Trial, record log and responses of a trial folder."""
    from trialkit.trial.file import load_trial

    trial = load_trial(folder)
    try:
        from trialkit.responses.compute import load_responses
    except ImportError as exc:  # pragma: no cover - depends on the build
        raise AnalysisError(f"this build cannot compute responses ({exc}); analyse an "
                            "exported table instead") from None
    try:
        resp = load_responses(trial.folder)
    except ImportError as exc:  # the record log module is not in this build
        raise AnalysisError(f"this build cannot read the record log ({exc}); analyse an "
                            "exported table instead") from None
    table = resp.baths
    responses, aims = {}, {}
    for r in trial.responses:
        measure = r.measure or r.name
        col = measure if measure in table.columns else f"{measure}_mean"
        responses[r.name] = col
        aims[r.name] = r.aim
    cfg = trial.sections.get("analysis")
    if not isinstance(cfg, AnalysisConfig):
        cfg = AnalysisConfig()
    return AnalysisSource(table, tuple(trial.factors), responses, aims, cfg,
                          int(trial.seed or 0), str(trial.path), tuple(trial.responses))


def response_for(source: AnalysisSource, name: str | None) -> str:
    """The table column to analyse for response ``name`` (default: the first)."""
    if name is None:
        if source.responses:
            return next(iter(source.responses.values()))
        raise AnalysisError("name the response column to analyse with --response NAME")
    if source.responses:
        if name in source.responses:
            return source.responses[name]
        if name in source.table.columns or f"{name}_mean" in source.table.columns:
            return name
        raise AnalysisError(f"no response {name!r} in this trial; "
                            + did_you_mean(name, list(source.responses)))
    return name
