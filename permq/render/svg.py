"""A small SVG writer for the report: the null distribution and the robustness panel.

Input is plain data (a `NullPicture.to_dict()`, a robustness record); output is one inline
`<svg>` element with a title, so that the page needs no network and no plotting library.
"""
from __future__ import annotations

from html import escape

from . import numbers as fmt

INK, BAR, MARK, NORMAL, PERM, GRID = "#222", "#8fa9c9", "#c0392b", "#d68a2e", "#3d6fb0", "#ccc"


class Canvas:
    """An SVG drawing built up element by element; `str()` gives the markup."""

    def __init__(self, width: int, height: int, title: str, css_class: str):
        self.width, self.height = width, height
        self.parts = [f"<title>{escape(title)}</title>"]
        self.css_class = css_class
        self.title = title

    def rect(self, x, y, w, h, fill, label: str = "") -> None:
        tip = f"<title>{escape(label)}</title>" if label else ""
        self.parts.append(f'<rect x="{x:.2f}" y="{y:.2f}" width="{max(w, 0):.2f}" '
                          f'height="{max(h, 0):.2f}" fill="{fill}">{tip}</rect>')

    def line(self, x1, y1, x2, y2, stroke=INK, width=1.0, dash: str = "") -> None:
        d = f' stroke-dasharray="{dash}"' if dash else ""
        self.parts.append(f'<line x1="{x1:.2f}" y1="{y1:.2f}" x2="{x2:.2f}" y2="{y2:.2f}" '
                          f'stroke="{stroke}" stroke-width="{width}"{d}/>')

    def text(self, x, y, words: str, anchor: str = "start", size: int = 11,
             fill: str = INK) -> None:
        self.parts.append(f'<text x="{x:.2f}" y="{y:.2f}" font-size="{size}" '
                          f'text-anchor="{anchor}" fill="{fill}" '
                          f'font-family="sans-serif">{escape(words)}</text>')

    def polygon(self, points, fill) -> None:
        pts = " ".join(f"{x:.2f},{y:.2f}" for x, y in points)
        self.parts.append(f'<polygon points="{pts}" fill="{fill}"/>')

    def __str__(self) -> str:
        return (f'<svg xmlns="http://www.w3.org/2000/svg" class="{self.css_class}" '
                f'role="img" aria-label="{escape(self.title)}" width="{self.width}" '
                f'height="{self.height}" viewBox="0 0 {self.width} {self.height}">'
                + "".join(self.parts) + "</svg>")


def null_distribution(pic: dict, width: int = 560, height: int = 220) -> str:
    """Bars of the null distribution's bins, the observed value marked with a red line."""
    title = f"{pic['statistic']} under the null ({pic['source']})"
    c = Canvas(width, height, title, "permq-null")
    left, right, top, bottom = 48, 12, 24, 40
    plot_w, plot_h = width - left - right, height - top - bottom
    masses = pic["masses"]
    edges = [float(e) for e in pic["edges"]]
    tallest = max(masses) if masses and max(masses) > 0 else 1.0
    lo, hi = edges[0], edges[-1]
    span = (hi - lo) or 1.0

    def x_of(v):
        return left + (v - lo) / span * plot_w

    c.text(left, 14, _clip(title, 90), size=11)
    c.line(left, top + plot_h, left + plot_w, top + plot_h)
    c.line(left, top, left, top + plot_h)
    c.text(left - 4, top + 4, f"{tallest:.3g}", anchor="end", size=9)
    c.text(left - 4, top + plot_h, "0", anchor="end", size=9)
    for i, m in enumerate(masses):
        if m <= 0:
            continue
        x0, x1 = x_of(edges[i]), x_of(edges[i + 1])
        h = m / tallest * plot_h
        c.rect(x0 + 0.5, top + plot_h - h, x1 - x0 - 1, h, BAR,
               f"[{fmt.num(edges[i])}, {fmt.num(edges[i + 1])}): {m:.4g}")
    obs = pic.get("observed")
    if isinstance(obs, (int, float)):
        xo = min(max(x_of(float(obs)), left), left + plot_w)
        c.line(xo, top - 4, xo, top + plot_h, MARK, 2)
        c.polygon([(xo - 5, top + plot_h + 9), (xo + 5, top + plot_h + 9),
                   (xo, top + plot_h + 2)], MARK)
        c.text(xo, top + plot_h + 28, f"observed {fmt.num(obs)}", anchor="middle", size=10,
               fill=MARK)
    c.text(left, top + plot_h + 14, fmt.num(lo), size=9)
    c.text(left + plot_w, top + plot_h + 14, fmt.num(hi), anchor="end", size=9)
    c.text(left + 6, top + 8, "probability per bin", size=9, fill="#666")
    return str(c)


def law_rates(record: dict, width: int = 640) -> str:
    """Rejection rate under the null per law (both tests, with the level drawn) beside the
    power at the shift; whiskers are 2 Monte Carlo standard errors."""
    laws = record["laws"]
    row_h, top, label_w = 34, 40, 150
    height = top + row_h * len(laws) + 36
    title = (f"rejection rate under the null and power per "
             f"{'scheme' if record['analysis']['family'] == 'table' else 'law'}: "
             f"{record['analysis']['normal_test']} against the permutation test")
    c = Canvas(width, height, title, "permq-laws")
    panel_w = (width - label_w - 30) / 2
    level = float(record["significance"])
    rate_max = max([level * 3] + [law[s]["rejection_rate"] + 2 * law[s]["se"]
                                  for law in laws for s in ("normal_theory", "permutation")])
    panels = [(label_w, "rejection rate under the null", "rejection_rate", "se", rate_max),
              (label_w + panel_w + 20, "power", "power", "power_se", 1.0)]
    c.text(8, 14, _clip(title, 100), size=11)
    c.rect(label_w, 20, 10, 8, NORMAL)
    c.text(label_w + 14, 28, "normal theory", size=10)
    c.rect(label_w + 110, 20, 10, 8, PERM)
    c.text(label_w + 124, 28, "permutation", size=10)
    for x0, heading, key, se_key, top_value in panels:
        c.text(x0, top + 6, heading, size=10, fill="#555")
        bottom = top + 10 + row_h * len(laws)
        c.line(x0, top + 10, x0, bottom, GRID)
        scale = (panel_w - 10) / (top_value or 1.0)
        if key == "rejection_rate":
            xl = x0 + level * scale
            c.line(xl, top + 10, xl, bottom, MARK, 1, "4,3")
            c.text(xl, bottom + 12, f"level {level * 100:g}%", anchor="middle", size=9,
                   fill=MARK)
        c.text(x0 + panel_w - 10, bottom + 12, f"{top_value:.2g}", anchor="end", size=9)
        for i, law in enumerate(laws):
            y = top + 14 + i * row_h
            for j, (side, colour) in enumerate((("normal_theory", NORMAL),
                                                ("permutation", PERM))):
                v, se = law[side][key], law[side][se_key]
                yy = y + j * 12
                c.rect(x0, yy, v * scale, 10, colour, f"{law['name']}, {side.replace('_', ' ')}: "
                       f"{v:.3f} ± {se:.3f}")
                c.line(x0 + (v - 2 * se) * scale, yy + 5, x0 + (v + 2 * se) * scale, yy + 5,
                       INK, 1)
    for i, law in enumerate(laws):
        c.text(label_w - 6, top + 28 + i * row_h, _clip(law["name"], 24), anchor="end",
               size=10)
    return str(c)


def _clip(text: str, width: int) -> str:
    return text if len(text) <= width else text[:width - 1] + "…"
