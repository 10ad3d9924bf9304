"""Renderers: results (plain data) -> text, JSON, CSV, Markdown. They never compute."""
from __future__ import annotations

from . import csvout, jsonout, markdown, text

RENDERERS = {"text": text.render, "json": jsonout.render, "csv": csvout.render,
             "markdown": markdown.render}


def render(outputs, fmt: str = "text", color: bool = False) -> str:
    if fmt == "text":
        return text.render(outputs, color=color)
    return RENDERERS[fmt](outputs)
