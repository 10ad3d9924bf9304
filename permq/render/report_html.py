"""The report page: one self-contained HTML file (no scripts, no fonts, no network).

Input is `report.gather(session)` (plain data); sections: the results in brief (one sentence
each), every statement with its table and pictures (inline SVG), a methods paragraph naming
each method with its published source, the data files with SHA-256 and row counts, and what
reproduces the page (version, seeds, settings, the statements as a query file).
"""
from __future__ import annotations

from html import escape

from ..syntax.parser import one_line
from .html import STYLE, section
from .methods import method_of, normal_sources, short_citation, source_text, sources_for
from .sentences import sentence

PAGE_STYLE = """
body{font-family:system-ui,-apple-system,'Segoe UI',sans-serif;margin:2em auto;max-width:62em;
  padding:0 1em;color:#222;line-height:1.4}
h1{font-size:22px}h2{font-size:17px;margin-top:1.8em;border-bottom:1px solid #ccc}
table.files td,table.files th{border-bottom:1px solid #ddd;padding:2px 8px;text-align:left}
code,pre{font-family:ui-monospace,monospace;font-size:12px}
pre{background:#f6f6f6;padding:0.6em;overflow-x:auto}
ol.brief li{margin:0.3em 0}
.refs li{margin:0.2em 0;font-size:12px}
"""


def render(data: dict) -> str:
    records = [it["record"] for it in data["items"] if "record" in it]
    body = [f"<h1>permq report</h1><p>Written {escape(data['written'])} by permq "
            f"{escape(data['version'])}. {len(records)} result"
            f"{'s' if len(records) != 1 else ''} from {len(data['items'])} statements.</p>"]
    body.append(_brief(data))
    body.append(_statements(data))
    body.append(_methods(records))
    body.append(_files(data))
    body.append(_reproduce(data))
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
            f"<title>permq report</title><style>{PAGE_STYLE}{STYLE}</style></head><body>"
            + "".join(body) + "</body></html>\n")


def _anchor(i: int) -> str:
    return f"statement-{i + 1}"


def _brief(data) -> str:
    items = []
    for i, it in enumerate(data["items"]):
        if "record" not in it:
            continue
        text = sentence(it["record"])
        if text:
            items.append(f'<li><a href="#{_anchor(i)}">{escape(one_line(it["statement"]))}'
                         f"</a>: {escape(text)}</li>")
    if not items:
        return "<h2>Results in brief</h2><p>No statement gave a result.</p>"
    return '<h2>Results in brief</h2><ol class="brief">' + "".join(items) + "</ol>"


def _statements(data) -> str:
    out = ["<h2>Statements</h2>"]
    for i, it in enumerate(data["items"]):
        if "record" in it:
            out.append(section(it["record"], pictures=True, anchor=_anchor(i)))
        else:
            out.append(f'<div class="permq-note" id="{_anchor(i)}"><h3><code>'
                       f"{escape(one_line(it['statement']))}</code></h3>"
                       f"<pre>{escape(it['note'])}</pre></div>")
    return "".join(out)


def _cite(keys) -> str:
    cites = [short_citation(k) for k in keys if source_text(k)]
    return f" ({'; '.join(cites)})" if cites else ""


def methods_paragraph(records) -> str:
    """The methods in words, each with its sources (plain text)."""
    results = [r for r in records if "error" not in r and "plan" not in r]
    if not results:
        return ""
    tests, normals, sizes = [], [], []
    for r in results:
        m = method_of(r)
        item = m.name + _cite(m.sources)
        if item not in tests:
            tests.append(item)
        terms = [t.get("normal_theory") for t in r.get("terms") or []]     # two factors
        for nt in [r.get("normal_theory")] + list(r.get("normal_theory_also") or []) + terms[:1]:
            if nt:
                item = nt["test"] + _cite(normal_sources(nt["test"]))
                if item not in normals:
                    normals.append(item)
        for s in r.get("effect_sizes") or []:
            item = s["name"].split(" (")[0] + _cite([s["source"]] if s.get("source") else [])
            if item not in sizes:
                sizes.append(item)
    words = [f"The analyses used the {_join(tests)}."]
    if any(r.get("method") == "exact" for r in results):
        words.append("Exact p-values count every arrangement of the reference set whose "
                     "statistic is at least as extreme as the one observed (relative tolerance "
                     "1e-9), conditional on ties (mid-ranks).")
    if any(r.get("method") == "monte-carlo" for r in results):
        words.append("Monte Carlo p-values are (b + 1) / (m + 1) for b exceedances in m random "
                     f"arrangements{_cite(['phipson-smyth-2010'])}, with a 99% Clopper-Pearson "
                     "interval and the seed that reproduces them.")
    if normals:
        words.append(f"Beside each, the normal-theory counterpart: {_join(normals)}.")
    if sizes:
        words.append(f"Effect sizes: {_join(sizes)}.")
    return " ".join(words)


def _join(items) -> str:
    items = list(items)
    return items[0] if len(items) == 1 else ", ".join(items[:-1]) + " and " + items[-1]


def _methods(records) -> str:
    text = methods_paragraph(records)
    keys = sources_for(records)
    refs = "".join(f"<li>{escape(source_text(k))}</li>" for k in keys)
    return ("<h2>Methods</h2>" + (f"<p class=\"methods\">{escape(text)}</p>" if text else "")
            + (f'<h3>References</h3><ul class="refs">{refs}</ul>' if refs else ""))


def _files(data) -> str:
    if not data["files"]:
        return "<h2>Data</h2><p>No data file was loaded; the data are in the statements.</p>"
    rows = "".join(f"<tr><td><code>{escape(f['table'])}</code></td><td>{escape(f['path'])}</td>"
                   f"<td>{f['rows']:,}</td><td>{f['columns']}</td>"
                   f"<td><code>{f['sha256']}</code></td></tr>" for f in data["files"])
    return ('<h2>Data</h2><table class="files"><tr><th>table</th><th>file</th><th>rows</th>'
            f"<th>columns</th><th>SHA-256</th></tr>{rows}</table>")


def _reproduce(data) -> str:
    s = data["settings"]
    seeds = "".join(f"<li><code>{escape(one_line(x['statement']))}</code>: seed {x['seed']}</li>"
                    for x in data["seeds"])
    settings = (f"session seed {s['seed'] if s['seed'] is not None else 'fresh each run'}, "
                f"confidence {s['confidence']:g}, alternative {s['alternative']}, "
                f"budget {s['budget_seconds']:g} s")
    replay = "\n".join(data["replay"])
    return ("<h2>Reproducing this page</h2>"
            f"<p>permq {escape(data['version'])}; {escape(settings)}.</p>"
            + (f"<p>Monte Carlo seeds:</p><ul>{seeds}</ul>" if seeds else
               "<p>Every p-value here is exact: no seed is needed.</p>")
            + "<p>The statements as a query file (seeds pinned; "
              "<code>permq run FILE --report page.html</code>):</p>"
            f"<pre class=\"replay\">{escape(replay)}</pre>")
