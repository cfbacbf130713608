"""The trial report: figures, plain-language findings, recipe, cautions, in one page.

:func:`build_report` renders a :class:`~trialkit.analysis.trial_data.TrialAnalysis`
(from ``trialkit.analyze(folder)``) as a :class:`Report`; :func:`write_report` renders
and writes it (self-contained HTML, optional Markdown).

May import: ``trialkit.figures`` and the result types of the stages before it; it renders
and computes nothing (never the trial analysis, the fits, the responses, the record log or
the plan).
"""

from trialkit.report.build import SECTION_TITLES, build_report, write_report
from trialkit.report.document import Block, Report, ReportError, Section

__all__ = ["SECTION_TITLES", "Block", "Report", "ReportError", "Section", "build_report",
           "write_report"]
