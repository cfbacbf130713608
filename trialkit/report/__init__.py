"""The trial report: figures, plain-language findings, recipe, cautions, in one page.

:func:`build_report` gathers a trial folder into a :class:`Report`;
:func:`write_report` builds and writes it (self-contained HTML, optional Markdown).
"""

from trialkit.report.build import SECTION_TITLES, build_report, write_report
from trialkit.report.document import Block, Report, ReportError, Section

__all__ = ["SECTION_TITLES", "Block", "Report", "ReportError", "Section", "build_report",
           "write_report"]
