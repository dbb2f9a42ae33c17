"""The output boundary: a self-contained index.html, summary.json, CSV tables and figures of
an assessment, and the folder of a batch study, each written atomically into one folder
(``reports/<name>/`` by default) by the one folder writer of :mod:`uq.report.files`."""
from uq.report.files import (
    MARKER,
    OutputRefusedError,
    ReportExistsError,
    check_output_folder,
    default_output_dir,
    json_text,
    prepare_output,
    safe_folder_name,
    write_csv,
)
from uq.report.summary import SCHEMA_VERSION, build_summary
from uq.report.writer import (
    CAUTIONS,
    MODEL_ASSUMPTIONS,
    SECTION_IDS,
    default_report_dir,
    render_html,
    write_report,
)
from uq.report.study import render_study_html, write_study

__all__ = [
    "write_report",
    "write_study",
    "build_summary",
    "render_html",
    "render_study_html",
    "safe_folder_name",
    "default_report_dir",
    "default_output_dir",
    "check_output_folder",
    "prepare_output",
    "json_text",
    "write_csv",
    "ReportExistsError",
    "OutputRefusedError",
    "MARKER",
    "SCHEMA_VERSION",
    "SECTION_IDS",
    "CAUTIONS",
    "MODEL_ASSUMPTIONS",
]
