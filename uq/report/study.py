"""The output folder of a batch study: ``study.csv``, ``study.json`` and ``index.html``.

Written through the same atomic folder writer, JSON encoder, CSV writer and page template
family as the assessment report (:mod:`uq.report.files`, :mod:`uq.report.pages`).
"""
from __future__ import annotations

import os
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

from uq.report._format import Formatter, input_label
from uq.report.files import write_csv, write_folder, write_json
from uq.report.pages import render_page
from uq.report.writer import CAUTIONS

__all__ = ["render_study_html", "write_study", "best_variant_sentence"]


def render_study_html(result, *, record: dict[str, Any] | None = None,
                      cautions: Sequence[str] = ()) -> str:
    """The self-contained ``index.html`` of a :class:`uq.studies.batch.StudyResult`.

    ``record`` is ``result.to_dict()`` when the caller has it already; ``cautions`` are
    added after the standard ones.
    """
    record = result.to_dict() if record is None else record
    frame = result.to_frame()
    rows = _page_rows(result, frame)
    fields = list(result.study.fields)
    grid = result.study.layout == "grid"
    conf, required = _decision(result)
    heatmap = _heatmap(frame, fields, required) if grid and required is not None else None
    return render_page(
        "study.html.j2", fmt=Formatter(),
        study=result.study, samples=result.samples, scheme=result.scheme,
        replicates=result.replicates, seed=result.seed, block_size=result.block_size,
        fields=fields, field_labels={f: input_label(f) for f in fields}, rows=rows,
        best=best_variant_sentence(rows, fields, required, conf),
        heatmap=heatmap,
        ranking_label=record["ranking"]["measure"], ranking_rows=record["ranking"]["rows"],
        confidence_pct=f"{conf * 100:g} %",
        cautions=list(CAUTIONS) + [c for c in cautions if c not in CAUTIONS])


def _page_rows(result, frame=None) -> list[dict]:
    """The study's rows as plain dicts (None for missing), each with its page ``label``."""
    frame = result.to_frame() if frame is None else frame
    rows = frame.astype(object).where(frame.notna(), None).to_dict("records")
    grid = result.study.layout == "grid"
    for i, r in enumerate(rows):
        # a grid variant's name only repeats its parameters, which have their own columns
        r["label"] = f"#{i + 1}" if grid else r["variant"]
    return rows


def _decision(result) -> tuple[float, float | None]:
    """Confidence level and required probability of the study's verdicts."""
    if not result.variants:
        return 0.95, None
    v = result.variants[0].verdict
    return v.confidence, v.required_probability


def best_variant_sentence(rows, fields, required, confidence) -> str:
    """The best variant that meets the requirement (lower bound of P(success) at least the
    required probability; the robust rule of :func:`uq.decisions.robust_choice` among them),
    in one sentence, or a plain statement that none does."""
    from uq.decisions import robust_choice

    fmt = Formatter()
    if not rows or required is None:
        return "No variant was run."
    best = robust_choice([r["p_success_low"] for r in rows],
                         [r["mean_margin_Wh"] for r in rows])
    r = rows[best]
    pct = f"{confidence * 100:g} %"
    figures = (f"P(success) {fmt.pct(r['p_success'])} ({pct} CI "
               f"{fmt.pct_interval(r['p_success_low'], r['p_success_high'])})")
    where = _variant_words(r, fields)
    if r["p_success_low"] is not None and r["p_success_low"] >= required:
        return (f"Best variant meeting the required {fmt.pct(required)}: {r['label']}"
                f"{where}, {figures}, mean margin {fmt.num(r['mean_margin_Wh'], 0, 'Wh')}.")
    return (f"No variant meets the required {fmt.pct(required)} on the lower bound of "
            f"P(success); the closest is {r['label']}{where}, {figures}.")


def _variant_words(row, fields) -> str:
    given = [f"{input_label(f)} = {row[f]}" for f in fields if row.get(f) is not None]
    return f" ({'; '.join(given)})" if given else ""


def _heatmap(frame, fields, required) -> str | None:
    """The base64 PNG of the study's heat maps, or None (fewer than two varied fields)."""
    import base64

    from uq.report.figures import png_bytes, study_heatmaps_figure

    shown = frame.copy()
    for f in fields:
        shown[f] = [("(base)" if v is None or v != v else v) for v in shown[f]]
    fig = study_heatmaps_figure(shown, fields, required_probability=required,
                                labels={f: input_label(f) for f in fields})
    if fig is None:
        return None
    return base64.b64encode(png_bytes(fig)).decode("ascii")


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
    record["best_variant_sentence"] = best_variant_sentence(
        _page_rows(result), list(result.study.fields), _decision(result)[1], _decision(result)[0])

    def build(folder: Path) -> None:
        write_csv(result.to_frame(), folder / "study.csv")
        write_json(folder / "study.json", record)
        (folder / "index.html").write_text(
            render_study_html(result, record=record, cautions=cautions), encoding="utf-8")

    return write_folder(out_dir, build, kind="study", overwrite=overwrite, notes=notes)
