"""The output folder of a batch study: ``study.csv``, ``study.json`` and ``index.html``.

Written through the same atomic folder writer, JSON encoder, CSV writer and page template
family as the assessment report (:mod:`uq.report.files`, :mod:`uq.report.pages`).
"""
from __future__ import annotations

import os
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

from uq.report._format import Formatter
from uq.report.files import write_csv, write_folder, write_json
from uq.report.pages import render_page
from uq.report.writer import CAUTIONS

__all__ = ["render_study_html", "write_study"]


def render_study_html(result, *, record: dict[str, Any] | None = None,
                      cautions: Sequence[str] = ()) -> str:
    """The self-contained ``index.html`` of a :class:`uq.studies.batch.StudyResult`.

    ``record`` is ``result.to_dict()`` when the caller has it already; ``cautions`` are
    added after the standard ones.
    """
    record = result.to_dict() if record is None else record
    frame = result.to_frame()
    rows = frame.astype(object).where(frame.notna(), None).to_dict("records")
    conf = result.variants[0].verdict.confidence if result.variants else 0.95
    return render_page(
        "study.html.j2", fmt=Formatter(),
        study=result.study, samples=result.samples, scheme=result.scheme,
        replicates=result.replicates, seed=result.seed, block_size=result.block_size,
        fields=list(result.study.fields), rows=rows,
        ranking_label=record["ranking"]["measure"], ranking_rows=record["ranking"]["rows"],
        confidence_pct=f"{conf * 100:g} %",
        cautions=list(CAUTIONS) + [c for c in cautions if c not in CAUTIONS])


def write_study(result, out_dir: str | os.PathLike, *, overwrite: bool = False,
                cautions: Sequence[str] = (),
                notes: Callable[[str], None] | None = None) -> Path:
    """Write ``study.csv``, ``study.json`` and ``index.html`` into ``out_dir`` atomically.

    Parameters
    ----------
    result : uq.studies.batch.StudyResult
    out_dir : path-like
        The folder to create (see :func:`uq.report.files.write_folder` for what may be
        replaced).
    overwrite : bool, optional
        Replace an existing study or report folder that transit-risk wrote.
    cautions : sequence of str, optional
        Cautions raised during the run (e.g. physics range warnings), listed in
        ``study.json`` and on the page.
    notes : callable(str), optional
        Told when a partial folder of a killed run is removed.

    Returns
    -------
    pathlib.Path
        ``out_dir``.

    Raises
    ------
    uq.report.ReportExistsError
        ``out_dir`` exists and ``overwrite`` is false, or it is not a folder this tool wrote.
    """
    record = result.to_dict()
    record["cautions"] = list(cautions)

    def build(folder: Path) -> None:
        write_csv(result.to_frame(), folder / "study.csv")
        write_json(folder / "study.json", record)
        (folder / "index.html").write_text(
            render_study_html(result, record=record, cautions=cautions), encoding="utf-8")

    return write_folder(out_dir, build, kind="study", overwrite=overwrite, notes=notes)
