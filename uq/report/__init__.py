"""The report of an assessment: a self-contained index.html, summary.json, CSV tables and
figures, written atomically into one folder (``reports/<scenario name>/`` by default)."""
from uq.report.summary import SCHEMA_VERSION, build_summary
from uq.report.writer import (
    CAUTIONS,
    MODEL_ASSUMPTIONS,
    SECTION_IDS,
    ReportExistsError,
    default_report_dir,
    render_html,
    safe_folder_name,
    write_report,
)

__all__ = [
    "write_report",
    "build_summary",
    "render_html",
    "safe_folder_name",
    "default_report_dir",
    "ReportExistsError",
    "SCHEMA_VERSION",
    "SECTION_IDS",
    "CAUTIONS",
    "MODEL_ASSUMPTIONS",
]
