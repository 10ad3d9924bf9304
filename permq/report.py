"""The report file: gather what a session ran into plain data, then write one HTML page.

    write(session, path) -> str        # the sentence that says what was written

`gather(session)` gives the report's data: every statement with its record (the JSON
object) or note text, the null-distribution picture of each result (the engine's exact law,
or seeded Monte Carlo arrangements, as `picture` gives), the data files with their SHA-256
and row counts, permq's version, the seeds and the settings. `render/report_html.py` draws it.
"""
from __future__ import annotations

import datetime
import hashlib
from pathlib import Path

from .errors import PermqError


def file_record(name: str, path: str, rows: int, columns: int) -> dict:
    """A data file as the report lists it: its SHA-256 is of the bytes read."""
    digest = hashlib.sha256(Path(path).read_bytes()).hexdigest()
    return {"table": name, "path": str(path), "sha256": digest, "rows": int(rows),
            "columns": int(columns), "given": False}


def frame_record(name: str, frame) -> dict:
    """A table handed over from Python: the SHA-256 of its values written as CSV."""
    text = frame.to_csv(index=False).encode("utf-8")
    return {"table": name, "path": "(given from Python; SHA-256 of the table as CSV)",
            "sha256": hashlib.sha256(text).hexdigest(), "rows": int(frame.shape[0]),
            "columns": int(frame.shape[1]), "given": True}


def gather(session) -> dict:
    from . import __version__
    items, seeds = [], []
    for text, output in session.ran:
        if hasattr(output, "to_dict"):
            record = output.to_dict()
            if "null_picture" not in record or record.get("null_picture") is None:
                pic = _picture(output)
                if pic is not None:
                    record["null_picture"] = pic
            if record.get("seed") is not None:
                seeds.append({"statement": text, "seed": record["seed"]})
            items.append({"statement": text, "record": record})
        else:
            items.append({"statement": text, "note": getattr(output, "text", str(output))})
    d = session.defaults
    return {"version": __version__,
            "written": datetime.datetime.now().astimezone().isoformat(timespec="seconds"),
            "files": [frame_record(f["table"], f["frame"]) if "frame" in f else f
                      for f in session.files],
            "items": items, "seeds": seeds,
            "settings": {"seed": d.seed, "confidence": d.confidence,
                         "alternative": d.alternative, "budget_seconds": d.budget_seconds},
            "replay": list(session.history)}


def _picture(output):
    """The null distribution of a single result, worked out now if the run did not keep it."""
    design = getattr(output, "design", None)
    if design is None or not hasattr(output, "outcome"):
        return None
    from .robustness.pictures import null_picture

    try:
        pic = null_picture(design, output.outcome)
    except (PermqError, ValueError, MemoryError):
        return None
    return None if pic is None else pic.to_dict()


def write(session, path: Path) -> str:
    from .render.report_html import render

    page = render(gather(session))
    try:
        path.write_text(page, encoding="utf-8")
    except OSError as exc:
        raise PermqError(f"cannot write the report '{path}': {exc.strerror}") from None
    results = sum(1 for _, o in session.ran if hasattr(o, "to_dict"))
    return f"wrote the report {path} ({results} result{'s' if results != 1 else ''})"
