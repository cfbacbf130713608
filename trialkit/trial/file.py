"""The trial file (TOML): read it, check every key, and return a :class:`Trial`.

Validation collects every problem first and raises one :class:`TrialFileError` whose
``.problems`` table names the file, the key, the value and a fix.  Sections owned by
later stages of the pipeline (``[[ingredient]]``, ``[bath]``, ``[sheet]``, ``[analysis]``,
``[evaluation]``) are parsed by the functions named in :data:`SECTION_PARSERS`.

Examples
--------
>>> trial = parse_trial_text('''
... [trial]
... title = "Chelator sweep"
... seed = 7
... [[factor]]
... name = "chelator"
... unit = "% w/v"
... low = 2.0
... high = 10.0
... [design]
... kind = "sweep"
... count = 3
... ''')
>>> trial.factors[0].label(), trial.layout.replicates
('chelator (% w/v)', 1)
"""

from __future__ import annotations

import importlib
import tomllib
from pathlib import Path
from typing import Any

from trialkit.exceptions import EXIT_USAGE, TrialFileError
from trialkit.problems import ProblemReport
from trialkit.trial.coupon_checks import check_coupons
from trialkit.trial.factors import Factor
from trialkit.trial.limits import check_document, short, text
from trialkit.trial.section_checks import (
    check_block_fit,
    check_factors,
    check_layout,
    check_responses,
    unknown_keys,
)
from trialkit.trial.spec import CouponSpec, DesignSpec, Layout, ResponseSpec, Trial

__all__ = ["CouponSpec", "DesignSpec", "Layout", "ResponseSpec", "Trial", "find_trial_file",
           "load_trial", "parse_trial_text", "SECTION_PARSERS", "TRIAL_FILE_NAME"]

TRIAL_FILE_NAME = "trial.toml"

#: Extension section -> "module:function" that parses it (run in this order).
SECTION_PARSERS: dict[str, str] = {
    "ingredient": "trialkit.chemistry.bathspec:parse_ingredient_section",
    "bath": "trialkit.chemistry.bathspec:parse_bath_section",
    "sheet": "trialkit.records.config:parse_sheet_section",
    "photos": "trialkit.photos.settings:parse_photos_section",
    "analysis": "trialkit.analysis.config:parse_analysis_section",
    "evaluation": "trialkit.planning.evaluation:parse_evaluation_section",
    "whole_plots": "trialkit.planning.whole_plots:parse_whole_plots_section",
}

#: The [design] section is checked by the design catalogue of the planning stage, looked
#: up by name like the sections above, so the trial stage imports nothing above it.
DESIGN_CHECKER = "trialkit.planning.designs.options:check_design_section"

TOP_LEVEL = ("trial", "factor", "design", "layout", "response", "coupons", *SECTION_PARSERS)
TRIAL_KEYS = ("title", "seed", "question", "notes", "operator")


# -- public entry points -----------------------------------------------------------------
def find_trial_file(path: str | Path) -> Path:
    """Return the trial file for ``path`` (a ``.toml`` file or a trial folder)."""
    p = Path(path)
    if p.is_dir():
        candidate = p / TRIAL_FILE_NAME
        if not candidate.exists():
            raise TrialFileError(
                f"{p}: no {TRIAL_FILE_NAME} in this folder. A trial folder holds a "
                f"{TRIAL_FILE_NAME}; create one with 'trialkit new {p}'."
            )
        return candidate
    if not p.exists():
        raise TrialFileError(f"{p}: no such trial file. Check the path, or create a trial "
                             f"with 'trialkit new FOLDER'.")
    return p


def load_trial(path: str | Path) -> Trial:
    """Read and check a trial file (or the ``trial.toml`` of a trial folder).

    Raises
    ------
    TrialFileError
        With every problem found, as ``.problems``.
    """
    p = find_trial_file(path)
    try:
        text = p.read_text(encoding="utf-8")
    except UnicodeDecodeError as exc:
        raise TrialFileError(f"{p}: not UTF-8 text ({exc.reason} at byte {exc.start}). "
                             "Save the file as UTF-8.") from None
    except IsADirectoryError:
        raise TrialFileError(f"{p}: is a folder, not a trial file") from None
    except PermissionError:
        raise TrialFileError(f"{p}: the trial file cannot be read (permission denied)") \
            from None
    return parse_trial_text(text, source=p)


def parse_trial_text(text: str, source: str | Path = "<text>") -> Trial:
    """Check trial-file text and return a :class:`Trial` (see :func:`load_trial`)."""
    problems = ProblemReport(str(source))
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        problems.add("", f"not valid TOML: {exc}", check="toml_syntax",
                     fix="fix the line named; strings need quotes, tables [brackets]")
        _unreadable(problems)
    except RecursionError:
        problems.add("", "arrays or tables are nested too deeply to read", check="too_deep",
                     fix="write the value each key expects (see 'trialkit new')")
        _unreadable(problems)
    # Non-finite numbers, deep nesting and hidden characters first: the section checks
    # below may then rely on finite numbers and shallow values.
    check_document(doc, problems)
    problems.raise_if_any(TrialFileError, "The trial file has problems; nothing was done.")
    trial = _check_document(doc, problems, Path(source) if source != "<text>" else None)
    problems.raise_if_any(TrialFileError, "The trial file has problems; nothing was done.")
    return trial


def _unreadable(problems: ProblemReport) -> None:
    """Raise: the file is not TOML at all (exit code 2: unreadable input)."""
    raise TrialFileError(f"The trial file cannot be read.\n{problems}", problems,
                         exit_code=EXIT_USAGE)


# -- checks ------------------------------------------------------------------------------


def _check_document(doc: dict, p: ProblemReport, path: Path | None) -> Trial:
    unknown_keys(doc, TOP_LEVEL, "", p)
    head = _table(doc, "trial", p, required=True)
    unknown_keys(head, TRIAL_KEYS, "trial", p)
    title = head.get("title", "")
    if not isinstance(title, str) or not title.strip():
        p.add("trial.title", "the trial needs a title (text in quotes)", value=short(title),
              fix='add title = "What this trial is for"', check="missing_title")
        title = ""
    seed = head.get("seed")
    if seed is None:
        p.add("trial.seed", "the trial needs a randomisation seed", check="missing_seed",
              fix="add seed = 20261201 (any whole number; it is recorded in every output)")
        seed = 0
    elif isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        p.add("trial.seed", "seed must be a non-negative whole number", value=seed,
              fix="write e.g. seed = 20261201", check="bad_seed")
        seed = 0

    factors = check_factors(doc.get("factor", []), p)
    design = _check_design(doc, factors, p)
    layout = check_layout(doc.get("layout", {}), p)
    responses = check_responses(doc.get("response", []), p)
    coupons = check_coupons(doc["coupons"], p) if "coupons" in doc else None
    if layout.blocks > 1 and layout.replicates % layout.blocks and design is not None:
        check_block_fit(design, factors, layout, p)

    trial = Trial(path=path, title=title, seed=int(seed), factors=tuple(factors),
                  design=design or DesignSpec("full-factorial"), layout=layout,
                  responses=tuple(responses), coupons=coupons,
                  question=text(head, "question", "trial", p),
                  notes=text(head, "notes", "trial", p),
                  operator=text(head, "operator", "trial", p), raw=doc)
    for name, target in SECTION_PARSERS.items():
        if name in doc:
            trial.sections[name] = _parse_extension(name, target, doc[name], trial, p)
    return trial


def _table(doc: dict, key: str, p: ProblemReport, required: bool = False) -> dict:
    value = doc.get(key)
    if value is None:
        if required:
            p.add(key, f"the [{key}] section is missing", check="missing_section",
                  fix=f"add a [{key}] section (see 'trialkit new' for a starter file)")
        return {}
    if not isinstance(value, dict):
        p.add(key, f"[{key}] must be a table (written [{key}])", value=type(value).__name__,
              check="not_table", fix=f"write [{key}] on its own line, then key = value lines")
        return {}
    return value


def _check_design(doc: dict, factors: list[Factor], p: ProblemReport) -> DesignSpec | None:
    table = _table(doc, "design", p, required=True)
    if not table:
        return None
    return _resolve(DESIGN_CHECKER)(table, factors, p)


def _resolve(target: str):
    """The function named by ``"module:function"`` (``None`` if it does not exist)."""
    module_name, func_name = target.split(":")
    try:
        module = importlib.import_module(module_name)
    except ModuleNotFoundError:
        return None
    return getattr(module, func_name, None)


def _parse_extension(name: str, target: str, raw: Any, trial: Trial, p: ProblemReport) -> Any:
    parse = _resolve(target)
    if parse is None:
        return raw
    try:
        return parse(raw, trial, p, name)
    except (TypeError, AttributeError, KeyError, IndexError) as exc:
        # A backstop: a value of a type the section's checks did not foresee.  It is
        # reported as a problem of that section rather than as a crash.
        p.add(name, f"[{name}] holds a value of the wrong type that could not be read "
              f"({type(exc).__name__}: {short(str(exc))})", check="section_unreadable",
              fix=f"compare [{name}] with the commented starter file of 'trialkit new'")
        return None
