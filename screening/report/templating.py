"""The Jinja environment of the report's HTML templates (autoescaped; ``hours`` filter)."""

from __future__ import annotations

from jinja2 import Environment, PackageLoader, select_autoescape

from screening.base.text import hours_text

ENV = Environment(
    loader=PackageLoader("screening.report", "templates"),
    autoescape=select_autoescape(["html"]),
)
ENV.filters["hours"] = hours_text
