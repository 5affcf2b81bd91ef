"""Figures of a report as PNG bytes: F1 per role with bootstrap intervals, and learning curves.

Both functions read the report dict of :mod:`trainer.reports.json_report`
(``report["roles"]``, ``report["systems"][i]["scores"]``, ``["intervals"]``
and the optional ``report["learning_curve"]``) and return the bytes of a PNG.
They draw on a private :class:`~matplotlib.figure.Figure` rendered by the Agg
canvas, so no display is needed and pyplot's global state is never touched.

The output is deterministic: matplotlib's default style (not the user's
``matplotlibrc``), a fixed figure size and dpi, and no ``Software`` entry in
the PNG metadata, so the same data gives the same bytes on the same
matplotlib version.
"""

from __future__ import annotations

import io
from contextlib import ExitStack
from typing import Any

import matplotlib
import matplotlib.style
from matplotlib.axes import Axes
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

DPI = 100
ROLE_PLOT_SIZE = (9.0, 4.2)  # inches
CURVE_PANEL_SIZE = (3.4, 2.7)  # inches per panel
CURVE_COLUMNS = 3
PNG_METADATA: dict[str, str | None] = {"Software": None}

# One colour per config, in report order, written out so a style change cannot move them: the Okabe-Ito
# colour-universal-design hues (a published colour-blind-safe set; yellow left out, too pale for lines),
# then greys and a dark olive. Each config also gets its own marker, so no line is told apart by colour alone.
CONFIG_COLOURS = ("#0072b2", "#e69f00", "#009e73", "#d55e00", "#cc79a7",
                  "#56b4e9", "#000000", "#7a7a7a", "#6b6b2e", "#b0b0b0")
MARKERS = ("o", "s", "D", "^", "v", "P", "X", "<", ">", "*")

STYLE: dict[str, Any] = {
    "font.size": 9,
    "axes.titlesize": 10,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "axes.grid.axis": "y",
    "grid.color": "#dddddd",
    "legend.frameon": False,
    "svg.hashsalt": "itinerant",
    "path.simplify": False,
}


def _context() -> ExitStack:
    """matplotlib's default style with our few changes, whatever the user's ``matplotlibrc`` says."""
    stack = ExitStack()
    stack.enter_context(matplotlib.style.context("default"))
    stack.enter_context(matplotlib.rc_context(STYLE))
    return stack


def config_styles(report: dict[str, Any]) -> dict[str, tuple[str, str]]:
    """``config name -> (colour, marker)``, by the config's place in ``report["systems"]``."""
    names = [s["name"] for s in report["systems"]]
    curve = report.get("learning_curve") or {}
    names += [n for n in curve.get("systems", {}) if n not in names]
    return {name: (CONFIG_COLOURS[i % len(CONFIG_COLOURS)], MARKERS[i % len(MARKERS)]) for i, name in enumerate(names)}


def _png(figure: Figure) -> bytes:
    FigureCanvasAgg(figure)
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=DPI, metadata=PNG_METADATA)
    return buffer.getvalue()


def score_names(report: dict[str, Any]) -> list[str]:
    """The scores drawn per config: each role, then ``micro`` and ``trigger``."""
    return [*report["roles"], "micro", "trigger"]


def _score(scores: dict[str, Any], name: str) -> dict[str, Any]:
    return scores["roles"][name] if name in scores["roles"] else scores[name]


def role_f1_plot(report: dict[str, Any]) -> bytes:
    """F1 of each role, micro and trigger for every config: a point per config with its 95% interval as whiskers.

    Points of one score sit side by side, one offset per config; the whiskers
    are ``systems[i]["intervals"][name]`` (bootstrap percentile interval).
    """
    names = score_names(report)
    systems = report["systems"]
    styles = config_styles(report)
    width = 0.7 / max(len(systems), 1)
    with _context():
        figure = Figure(figsize=ROLE_PLOT_SIZE, dpi=DPI, layout="constrained")
        axes = figure.add_subplot()
        for index, system in enumerate(systems):
            offset = (index - (len(systems) - 1) / 2) * width
            xs = [i + offset for i in range(len(names))]
            f1 = [_score(system["scores"], name)["f1"] for name in names]
            low = [f - system["intervals"][name][0] for f, name in zip(f1, names)]
            high = [system["intervals"][name][1] - f for f, name in zip(f1, names)]
            axes.errorbar(xs, f1, yerr=[[max(v, 0.0) for v in low], [max(v, 0.0) for v in high]],
                          fmt=styles[system["name"]][1], color=styles[system["name"]][0], capsize=3,
                          markersize=5, linewidth=1.2, label=system["name"])
        axes.axvline(len(report["roles"]) - 0.5, color="#999999", linewidth=0.8, linestyle=":")  # roles | pooled
        axes.set_xticks(range(len(names)), names)
        axes.set_xlim(-0.6, len(names) - 0.4)
        axes.set_ylim(0, 1)
        axes.set_ylabel("F1 (whiskers: 95% interval)")
        axes.set_title(f"F1 per role, {report['settings']['mode']} match")
        figure.legend(loc="outside right upper")
        return _png(figure)


def _curve_panel(axes: Axes, curve: dict[str, Any], name: str, styles: dict[str, tuple[str, str]]) -> None:
    for system, points in curve["systems"].items():
        xs = [p["train_records"] for p in points]
        ys = [p["f1"][name] for p in points]
        colour, marker = styles[system]
        axes.plot(xs, ys, marker=marker, color=colour, linewidth=1.2, markersize=4, label=system)
        bands = [p["intervals"][name] for p in points if name in p.get("intervals", {})]
        if len(bands) == len(points):
            axes.fill_between(xs, [b[0] for b in bands], [b[1] for b in bands], color=colour, alpha=0.15, linewidth=0)
    axes.set_title(name)
    axes.set_ylim(0, 1)
    axes.set_xlabel("mean training records")


def learning_curve_plot(report: dict[str, Any]) -> bytes | None:
    """Micro F1, each role's F1 and trigger F1 against the mean number of training records, a line per config.

    ``None`` when the report has no learning curve. One panel per score
    (``micro`` first, then the roles, then ``trigger``), three panels to a
    row; a shaded band is each point's bootstrap interval when the curve has them.
    """
    curve = report.get("learning_curve")
    if not curve or not curve.get("systems"):
        return None
    names = ["micro", *report["roles"], "trigger"]
    rows = -(-len(names) // CURVE_COLUMNS)
    columns = min(len(names), CURVE_COLUMNS)
    styles = config_styles(report)
    with _context():
        figure = Figure(figsize=(CURVE_PANEL_SIZE[0] * columns, CURVE_PANEL_SIZE[1] * rows), dpi=DPI,
                        layout="constrained")
        grid = figure.subplots(rows, columns, squeeze=False, sharey=True)
        for slot, axes in enumerate(grid.flat):
            if slot < len(names):
                _curve_panel(axes, curve, names[slot], styles)
            else:
                axes.set_visible(False)
        grid[0][0].set_ylabel("F1")
        figure.legend(*grid[0][0].get_legend_handles_labels(), loc="outside right upper")
        figure.suptitle("Learning curve (pooled held-out F1)")
        return _png(figure)



SQUARE_SIZE = (5.6, 4.2)  # inches: a [0, 1] x [0, 1] plot and its legend


def _square_png(figure: Figure, axes: Axes, *, xlabel: str, ylabel: str, title: str, top: float = 1.0) -> bytes:
    """Axes over [0, 1] x [0, top] with their labels, title and the legend outside: the PNG bytes."""
    axes.set_xlim(0, 1)
    axes.set_ylim(0, top)
    axes.set_xlabel(xlabel)
    axes.set_ylabel(ylabel)
    axes.set_title(title)
    figure.legend(loc="outside right upper")
    return _png(figure)


def reliability_plot(system: dict[str, Any]) -> bytes | None:
    """A reliability diagram of one config's held-out confidences: share correct against mean confidence per bin.

    One line per label of ``system["calibration"]`` (trigger, each role, all roles), a marker per
    non-empty bin; the diagonal is perfect calibration. ``None`` when no prediction had a confidence.
    """
    labels = [label for label, item in (system.get("calibration") or {}).items() if item["instances"]]
    if not labels:
        return None
    with _context():
        figure = Figure(figsize=SQUARE_SIZE, dpi=DPI, layout="constrained")
        axes = figure.add_subplot()
        axes.plot([0, 1], [0, 1], color="#999999", linewidth=0.8, linestyle=":", label="perfect")
        for index, label in enumerate(labels):
            item = system["calibration"][label]
            axes.plot([b["mean_confidence"] for b in item["bins"]], [b["accuracy"] for b in item["bins"]],
                      marker=MARKERS[index % len(MARKERS)], color=CONFIG_COLOURS[index % len(CONFIG_COLOURS)],
                      linewidth=1.2, markersize=4, label=f"{label} (ECE {item['ece']:.3f})")
        return _square_png(figure, axes, xlabel="mean confidence in bin", ylabel="share correct",
                           title=f"Reliability of held-out confidences: {system['name']}")


def precision_recall_plot(system: dict[str, Any]) -> bytes | None:
    """Precision against recall as the confidence threshold falls, one line per label of ``system["thresholds"]``.

    The F1-optimal threshold of each line is ringed. ``None`` when no prediction had a confidence.
    """
    labels = [label for label, item in (system.get("thresholds") or {}).items() if item["points"]]
    if not labels:
        return None
    with _context():
        figure = Figure(figsize=SQUARE_SIZE, dpi=DPI, layout="constrained")
        axes = figure.add_subplot()
        for index, label in enumerate(labels):
            item = system["thresholds"][label]
            colour = CONFIG_COLOURS[index % len(CONFIG_COLOURS)]
            axes.plot([p["recall"] for p in item["points"]], [p["precision"] for p in item["points"]], color=colour,
                      linewidth=1.2, label=f"{label} (best t={item['best']['threshold']:.2f})")
            axes.plot([item["best"]["recall"]], [item["best"]["precision"]], marker=MARKERS[index % len(MARKERS)],
                      color=colour, markersize=7, markerfacecolor="none")
        return _square_png(figure, axes, xlabel="recall", ylabel="precision", top=1.02,
                           title=f"Precision and recall by confidence threshold: {system['name']}")
