"""Picture files (PNG or SVG) drawn with matplotlib, an optional extra.

    pip install "permq[pictures]"

- a result with `picture "file.png"`: the null distribution of its statistic, the observed
  value marked;
- a robustness check with `picture "file.svg"`: the panel, the rejection rate under the null
  of both tests for every law (for counts: sampling scheme) with +-2 Monte Carlo standard
  errors and the nominal level drawn, beside the power at the shift (the effect).

`save` never raises for a missing library or an unwritable file: it returns the sentence to
show, so the result itself is kept. Only matplotlib's object interface is used (no pyplot), so
a user's own plotting state is left alone.
"""
from __future__ import annotations

from pathlib import Path

MISSING = 'picture not written: {name} needs matplotlib (pip install "permq[pictures]")'
FORMATS = (".png", ".svg")


def save(output, path) -> str:
    path = Path(path)
    try:
        from matplotlib.figure import Figure
    except ImportError:
        return MISSING.format(name=path.name)
    from ..robustness.result import RobustnessResult

    from ..power.result import PowerResult

    if isinstance(output, RobustnessResult):
        fig = panel_figure(Figure, output)
    elif isinstance(output, PowerResult):
        fig = power_figure(Figure, output.to_dict())
    else:
        pic = output.extra.get("null_picture")
        if pic is None:
            return "picture not written: no null distribution is kept for this result"
        fig = null_figure(Figure, pic)
    try:
        fig.savefig(path, format=path.suffix.lower().lstrip("."), bbox_inches="tight")
    except (OSError, ValueError) as exc:
        return f"picture not written: {exc}"
    return f"picture written to {path}"


def power_figure(Figure, d: dict):
    """Power of both tests against n (a group), with bars of two Monte Carlo errors."""
    ns = [r["n"][0] if len(set(r["n"])) == 1 else sum(r["n"]) for r in d["rows"]]
    fig = Figure(figsize=(6.4, 3.6))
    ax = fig.subplots()
    for key, label, colour in (("power", "permutation", "#b03a2e"),
                               ("normal_power", d["normal_test"], "#7a8fa6")):
        ax.errorbar(ns, [r[key] for r in d["rows"]], yerr=[2 * r[key + "_se"] for r in d["rows"]],
                    marker="o", capsize=3, color=colour, label=label)
    if d.get("target") is not None:
        ax.axhline(d["target"], color="#444", linestyle=":", linewidth=1)
    ax.axhline(d["level"], color="#999", linestyle="--", linewidth=1)
    ax.set_ylim(0, 1)
    ax.set_xlabel("n a group" if all(len(set(r["n"])) == 1 for r in d["rows"]) else "n in all")
    ax.set_ylabel("power")
    ax.set_title(f"{d['shift']}; {d['law_words']}", fontsize=9)
    ax.legend(frameon=False)
    return fig


def null_figure(Figure, pic: dict):
    edges = pic["edges"]
    centres = [(a + b) / 2 for a, b in zip(edges[:-1], edges[1:])]
    width = (edges[-1] - edges[0]) / max(1, len(centres))
    fig = Figure(figsize=(6.4, 3.6))
    ax = fig.subplots()
    ax.bar(centres, pic["masses"], width=width * 0.95, color="#7a8fa6")
    ax.axvline(pic["observed"], color="#b03a2e", linewidth=2, label=f"observed {pic['observed']:.4g}")
    ax.set_xlabel(pic["statistic"])
    ax.set_ylabel("probability under the null")
    ax.set_title(pic["source"], fontsize=9)
    ax.legend(frameon=False)
    return fig


def panel_figure(Figure, rr):
    from .robustness import column_words

    words = column_words(rr)
    names = [r.name for r in rr.rows]
    pos = list(range(len(names)))
    fig = Figure(figsize=(10, 4))
    left, right = fig.subplots(1, 2)
    for ax, kind in ((left, "rate"), (right, "power")):
        for shift, (label, colour) in zip((-0.15, 0.15), (("normal theory", "#7a8fa6"),
                                                          (words["perm"], "#b03a2e"))):
            vals, ses = _values(rr.rows, kind, label)
            ax.errorbar([p + shift for p in pos], vals, yerr=[2 * s for s in ses], fmt="o",
                        color=colour, label=label, capsize=3)
        ax.set_xticks(pos)
        ax.set_xticklabels(names, rotation=30, ha="right", fontsize=8)
    left.axhline(rr.significance, color="black", linestyle="--", linewidth=1,
                 label=f"nominal level {rr.significance:g}")
    left.set_ylabel("rejection rate under the null")
    right.set_ylabel(words["power"])
    right.set_ylim(0, 1)
    left.legend(frameon=False, fontsize=8)
    fig.suptitle(f"{rr.statement}\n{rr.datasets:,} data sets a {words['law']}", fontsize=9)
    if getattr(rr, "coverage", None):
        _coverage_axes(fig, rr)
    return fig


def _coverage_axes(fig, rr):
    """A third panel: coverage of both intervals per law, the nominal level drawn."""
    fig.set_size_inches(14, 4)
    for ax in fig.axes:
        ax.set_position([ax.get_position().x0 * 0.7, ax.get_position().y0,
                         ax.get_position().width * 0.7, ax.get_position().height])
    ax = fig.add_axes([0.72, fig.axes[0].get_position().y0, 0.25,
                       fig.axes[0].get_position().height])
    names = [r.name for r in rr.coverage]
    pos = list(range(len(names)))
    for shift, label, colour, vals, ses in (
            (-0.15, "normal theory", "#7a8fa6", [r.normal for r in rr.coverage],
             [r.normal_se for r in rr.coverage]),
            (0.15, "exact", "#b03a2e", [r.exact for r in rr.coverage],
             [r.exact_se for r in rr.coverage])):
        if any(v is None for v in vals):          # no exact interval
            continue
        ax.errorbar([p + shift for p in pos], vals, yerr=[2 * s for s in ses], fmt="o",
                    color=colour, label=label, capsize=3)
    ax.axhline(rr.coverage_level, color="black", linestyle="--", linewidth=1)
    ax.set_xticks(pos)
    ax.set_xticklabels(names, rotation=30, ha="right", fontsize=8)
    ax.set_ylabel(f"coverage of the {rr.coverage_level:.0%} intervals")
    ax.legend(frameon=False, fontsize=8)


def _values(rows, kind, label):
    if label == "normal theory":
        return ([r.normal_rate if kind == "rate" else r.normal_power for r in rows],
                [r.normal_se if kind == "rate" else r.normal_power_se for r in rows])
    return ([r.permutation_rate if kind == "rate" else r.permutation_power for r in rows],
            [r.permutation_se if kind == "rate" else r.permutation_power_se for r in rows])
