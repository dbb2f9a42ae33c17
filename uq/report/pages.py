"""The one HTML page mechanism: a Jinja2 template family on ``templates/base.html.j2``.

Every page transit-risk writes (the assessment report, the study page) is a template that
extends ``base.html.j2`` (document head, content-security policy, shared style, print
rules) and is rendered by :func:`render_page` with autoescaping on, so no scenario or study
string reaches the page unescaped.
"""
from __future__ import annotations

from datetime import datetime, timezone
from functools import lru_cache
from typing import Any

__all__ = ["render_page", "generated_stamp"]


@lru_cache(maxsize=1)
def _environment():
    import jinja2

    return jinja2.Environment(
        loader=jinja2.PackageLoader("uq.report", "templates"),
        autoescape=True,  # every scenario string is escaped
        undefined=jinja2.StrictUndefined,
        trim_blocks=True, lstrip_blocks=True,
    )


def generated_stamp() -> str:
    """The time a page is generated, as shown on it (UTC, to the minute)."""
    return datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC")


def render_page(template: str, **context: Any) -> str:
    """Render the page template ``template`` (a file in ``uq/report/templates``)."""
    context.setdefault("generated", generated_stamp())
    return _environment().get_template(template).render(**context)
