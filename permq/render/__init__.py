"""Renderers: results (plain data) -> text, JSON, CSV, Markdown, sentences. They never compute.

HTML (`html.py` fragments, `report_html.py` pages, `svg.py` pictures) is drawn from the same
records for notebooks and report files.
"""
from __future__ import annotations

from importlib import import_module

# format -> module with render(outputs); imported when a run first asks for that format
RENDERERS = {"text": "text", "json": "jsonout", "csv": "csvout", "markdown": "markdown",
             "sentences": "sentences"}
FORMATS = tuple(RENDERERS)


def render(outputs, fmt: str = "text", color: bool = False) -> str:
    module = import_module(f"{__name__}.{RENDERERS[fmt]}")
    if fmt == "text":
        return module.render(outputs, color=color)
    return module.render(outputs)
