"""Renderers: results (plain data) -> text, JSON, CSV, Markdown, sentences. They never compute.

HTML (`html.py` fragments, `report_html.py` pages, `svg.py` pictures) is drawn from the same
records for notebooks and report files.
"""
from __future__ import annotations

from . import csvout, jsonout, markdown, sentences, text

RENDERERS = {"text": text.render, "json": jsonout.render, "csv": csvout.render,
             "markdown": markdown.render, "sentences": sentences.render}
FORMATS = tuple(RENDERERS)


def render(outputs, fmt: str = "text", color: bool = False) -> str:
    if fmt == "text":
        return text.render(outputs, color=color)
    return RENDERERS[fmt](outputs)
