"""The HTML report's figures, drawn with matplotlib and written as inline SVG.

Each function takes serialised results (:func:`schemcheck.report.json.to_data`) and
returns one ``<svg>`` element as text (no XML prolog, no external reference), or "" when
it has nothing to draw. Text stays text (``svg.fonttype`` "none"), so the page's own
fonts render it, it prints sharply and it can be searched. The artists a test or a
reader looks for carry ids (:func:`element_id`): ``bar-…`` the stage's bar in the budget
chart, ``curve-…`` its worst case over temperature, ``hist-…`` its Monte Carlo
histogram, ``box-…`` its box in the chain view. Volts inside, scaled only for display.
"""

from __future__ import annotations

import io
import re
import threading
from typing import TYPE_CHECKING, Any, cast

from schemcheck.report import stage_lines as sl

if TYPE_CHECKING:
    from matplotlib.artist import Artist

Stage = dict[str, Any]

#: Okabe-Ito colours (distinguishable with the common colour-vision deficiencies)
COLOURS = {"vos": "#0072B2", "ib": "#E69F00", "ios": "#CC79A7", "drift": "#D55E00",
           "worst": "#0072B2", "mc": "#E69F00", "rss": "#777777", "budget": "#C0392B",
           "hist": "#56B4E9", "pass": "#2E7D32", "fail": "#C0392B", "unknown": "#7F8C8D"}
UPSTREAM_COLOURS = ("#009E73", "#56B4E9", "#999999", "#F0E442", "#8C6BB1", "#B15928")
SOURCE_LABELS = {"vos": "Vos", "ib": "Ib", "ios": "Ios", "drift": "drift over temperature"}
INK = "#1F2933"
GRID = "#D9DEE3"

#: matplotlib settings for every figure. Its stubs type ``rc_context``'s argument as a dict
#: keyed by the literal setting names, which a ``dict[str, Any]`` never matches (dict is
#: invariant): hence the cast where it is passed.
_STYLE: dict[str, Any] = {
    "svg.fonttype": "none",
    "svg.hashsalt": "schemcheck",
    "font.family": "sans-serif",
    "font.sans-serif": ["DejaVu Sans", "Arial", "Helvetica", "Liberation Sans"],
    "font.size": 8.5,
    "axes.edgecolor": "#9AA5B1",
    "axes.labelcolor": INK,
    "axes.linewidth": 0.8,
    "xtick.color": "#52606D",
    "ytick.color": "#52606D",
    "text.color": INK,
}
_LOCK = threading.Lock()  # matplotlib's settings are global: one figure at a time
_ID = re.compile(r'(id="|url\(#|href="#)([^")]+)')


def slug(name: str) -> str:
    """A stage identifier as part of an element id: ``U4/2`` -> ``U4-2``."""
    return re.sub(r"[^A-Za-z0-9_.-]", "-", name)


def element_id(kind: str, design: int, stage: Stage | str) -> str:
    """The id of a stage's artist: ``bar-1-U4-2`` (``design`` counts from 1)."""
    name = stage if isinstance(stage, str) else sl.stage_name(stage)
    return f"{kind}-{design}-{slug(name)}"


def scale_for(largest: float) -> tuple[float, str]:
    """(factor, unit) to show volts up to ``largest`` with 1 to 999 before the unit."""
    for factor, unit in ((1.0, "V"), (1e-3, "mV"), (1e-6, "µV"), (1e-9, "nV")):
        if largest >= factor * 0.9995:
            return factor, unit
    return 1e-12, "pV"


def _svg(fig: Any, prefix: str, keep: set[str]) -> str:
    """``fig`` as an inline ``<svg>``: every id matplotlib made gets ``prefix`` (several
    figures share one page), the ids in ``keep`` (ours) stay as they are."""
    out = io.StringIO()
    fig.savefig(out, format="svg", metadata={"Date": None, "Creator": None})
    text = out.getvalue()
    text = text[text.index("<svg"):]
    text = re.sub(r"<metadata>.*?</metadata>\s*", "", text, flags=re.DOTALL)

    def rename(match: re.Match[str]) -> str:
        name = match.group(2)
        return match.group(0) if name in keep else f"{match.group(1)}{prefix}{name}"

    text = _ID.sub(rename, text)
    return text.replace("<svg ", '<svg class="figure" role="img" ', 1)


def _figure(width_in: float, height_in: float) -> Any:
    from matplotlib.figure import Figure

    return Figure(figsize=(width_in, height_in))


def _volts_axis(axis: Any, factor: float, unit: str = "", nbins: int = 5) -> None:
    """Ticks in ``unit`` (volts / ``factor``); with ``unit``, the last tick names it."""
    from matplotlib.ticker import FixedFormatter, FixedLocator, MaxNLocator

    low, high = axis.get_view_interval()
    ticks = [t for t in MaxNLocator(nbins=nbins, min_n_ticks=3).tick_values(low, high)
             if low - 1e-12 * abs(high) <= t <= high + 1e-12 * abs(high)]
    labels = [f"{t / factor:.4g}".replace("-", "\u2212") for t in ticks]
    if unit and labels:
        labels[-1] += f" {unit}"
    axis.set_major_locator(FixedLocator(ticks))
    axis.set_major_formatter(FixedFormatter(labels))


def _segments(s: Stage) -> list[tuple[str, str, float, str]]:
    """(key, label, volts, colour) of the stage's worst case over temperature, in the
    order of the split: own Vos, Ib, Ios terms, each upstream stage, the drift."""
    sp = s.get("split") or {}
    out: list[tuple[str, str, float, str]] = []
    for key, field in (("vos", "vos_v"), ("ib", "ib_v"), ("ios", "ios_v")):
        if sp.get(field):
            out.append((key, SOURCE_LABELS[key], sp[field], COLOURS[key]))
    for up in s.get("upstream") or ():
        if up.get("worst_case_v"):
            out.append((f"up-{slug(up['id'])}", up["id"], up["worst_case_v"], ""))
    if sp.get("drift_v") and sp["drift_v"] > 0:
        out.append(("drift", SOURCE_LABELS["drift"], sp["drift_v"], COLOURS["drift"]))
    return out


def verdict(s: Stage) -> str:
    """pass, FAIL, no budget, unknown, or the reason it was not solved."""
    if s.get("status") != "ok":
        return f"not solved ({s.get('status')})"
    if s.get("within_budget") is None:
        return "no budget" if s.get("budget_v") is None else "unknown"
    return "pass" if s["within_budget"] else "FAIL"


def _verdict_colour(s: Stage) -> str:
    return {"pass": COLOURS["pass"], "FAIL": COLOURS["fail"]}.get(verdict(s), COLOURS["unknown"])


def budget_chart(stages: list[Stage], design: int) -> str:
    """One row per stage: its worst case over temperature as a bar stacked by source, its
    budget as a black mark, each row on its own scale (a bullet chart)."""
    if not stages:
        return ""
    upstream_ids = sorted({u["id"] for s in stages for u in s.get("upstream") or ()
                           if u.get("worst_case_v")})
    up_colour = {name: UPSTREAM_COLOURS[i % len(UPSTREAM_COLOURS)]
                 for i, name in enumerate(upstream_ids)}
    keep: set[str] = set()
    with _LOCK:
        import matplotlib as mpl
        from matplotlib.patches import Patch, Rectangle

        with mpl.rc_context(cast("dict[Any, Any]", _STYLE)):
            rows = len(stages)
            height = 0.6 * rows + 0.7
            fig = _figure(10.2, height)
            fig.subplots_adjust(left=0.1, right=0.8, top=1 - 0.45 / height,
                                bottom=0.3 / height, hspace=1.0)
            axes = fig.subplots(rows, 1, squeeze=False)[:, 0]
            used: dict[str, str] = {}
            for ax, s in zip(axes, stages):
                name = sl.stage_name(s)
                bar_id = element_id("bar", design, s)
                keep.add(bar_id)
                ax.set_yticks([])
                for side in ("top", "right", "left"):
                    ax.spines[side].set_visible(False)
                ax.text(-0.02, 0.5, f"{name}\n{s.get('value', '')}", transform=ax.transAxes,
                        ha="right", va="center", fontsize=8.5, fontweight="bold")
                worst = s.get("worst_case_over_temp_v")
                budget = s.get("budget_v")
                if worst is None:
                    ax.set_xticks([])
                    ax.spines["bottom"].set_visible(False)
                    reason = verdict(s)
                    if reason == "unknown" or reason.startswith("no budget"):
                        reason = "worst case unknown (part data missing)"
                    ax.text(0.0, 0.5, reason, transform=ax.transAxes, va="center",
                            color=COLOURS["unknown"], style="italic", gid=bar_id)
                    continue
                span = max(worst, budget or 0.0) * 1.06 or 1.0
                factor, unit = scale_for(span)
                left = 0.0
                for key, label, value, colour in _segments(s):
                    colour = colour or up_colour.get(label, UPSTREAM_COLOURS[0])
                    legend = label if not key.startswith("up-") else f"from {label}"
                    used.setdefault(legend, colour)
                    keep.add(f"{bar_id}-{key}")
                    ax.barh(0, value, left=left, height=0.62, color=colour, linewidth=0,
                            gid=f"{bar_id}-{key}")
                    left += value
                ax.add_patch(Rectangle((0, -0.31), worst, 0.62, fill=False, edgecolor=INK,
                                       linewidth=0.8, gid=bar_id))
                if budget is not None:
                    keep.add(f"budget-{design}-{slug(name)}")
                    ax.plot([budget, budget], [-0.5, 0.5], color="black", linewidth=2.2,
                            solid_capstyle="butt", gid=f"budget-{design}-{slug(name)}")
                ax.set_ylim(-0.5, 0.5)
                ax.set_xlim(0, span)
                _volts_axis(ax.xaxis, factor, unit, nbins=6)
                ax.tick_params(axis="x", labelsize=7, length=2.5, pad=1.5)
                ax.grid(axis="x", color=GRID, linewidth=0.6)
                ax.set_axisbelow(True)
                mark = verdict(s)
                text = f"{sl.volts(worst)}"
                text += f" / budget {sl.volts(budget)}" if budget is not None else ""
                ax.text(1.02, 0.5, f"{text}\n{mark}", transform=ax.transAxes, va="center",
                        fontsize=8, color=_verdict_colour(s),
                        fontweight="bold" if mark == "FAIL" else "normal")
            handles: list[Artist] = [Patch(color=c, label=label) for label, c in used.items()]
            handles.append(Patch(facecolor="none", edgecolor="none", label=""))
            from matplotlib.lines import Line2D

            handles[-1] = Line2D([], [], color="black", linewidth=2.2, label="budget")
            fig.legend(handles=handles, loc="upper left", ncol=min(len(handles), 6),
                       frameon=False, fontsize=7.5, bbox_to_anchor=(0.02, 1.0),
                       handlelength=1.4, columnspacing=1.2)
            return _svg(fig, f"budget{design}-", keep)


def temperature_curve(s: Stage, design: int) -> str:
    """The worst case over the temperature range and the Monte Carlo bound (or the RSS,
    without a Monte Carlo), with the budget."""
    curve = s.get("over_temperature")
    if not curve or not curve.get("temps_c"):
        return ""
    temps, worst = curve["temps_c"], curve["worst_case_v"]
    mc = curve.get("monte_carlo_v")
    budget = s.get("budget_v")
    largest = max(worst + (mc or []) + ([budget] if budget is not None else []))
    factor, unit = scale_for(largest or 1.0)
    curve_id = element_id("curve", design, s)
    keep = {curve_id, f"{curve_id}-mc", f"{curve_id}-rss"}
    with _LOCK:
        import matplotlib as mpl

        with mpl.rc_context(cast("dict[Any, Any]", _STYLE)):
            fig = _figure(4.6, 3.1)
            ax = fig.add_axes((0.14, 0.15, 0.83, 0.64))
            ax.plot(temps, worst, color=COLOURS["worst"], linewidth=2.0, label="worst case",
                    gid=curve_id)
            if mc:
                ax.plot(temps, mc, color=COLOURS["mc"], linewidth=1.6, linestyle=(0, (5, 2)),
                        label="Monte Carlo 99.7 % (RSS-scaled)", gid=f"{curve_id}-mc")
                at = curve.get("monte_carlo_temp_c")
                if at is not None and s.get("monte_carlo_v") is not None:
                    ax.plot([at], [s["monte_carlo_v"]], "o", color=COLOURS["mc"],
                            markersize=5, label=f"Monte Carlo sampled at {at:g} °C")
            else:
                ax.plot(temps, curve["rss_v"], color=COLOURS["rss"], linewidth=1.4,
                        linestyle=(0, (1, 1.5)), label="RSS", gid=f"{curve_id}-rss")
            if budget is not None:
                ax.axhline(budget, color=COLOURS["budget"], linewidth=1.2, linestyle=(0, (6, 3)),
                           label=f"budget {sl.volts(budget)}")
            ax.set_xlim(temps[0], temps[-1])
            ax.set_ylim(0, largest * 1.08 if largest > 0 else 1.0)
            _volts_axis(ax.yaxis, factor)
            ax.set_xlabel("temperature (°C)")
            ax.set_ylabel(f"output error ({unit})")
            ax.grid(color=GRID, linewidth=0.6)
            ax.set_axisbelow(True)
            for side in ("top", "right"):
                ax.spines[side].set_visible(False)
            ax.legend(loc="lower left", bbox_to_anchor=(-0.02, 1.02), ncol=2, fontsize=7,
                      frameon=False, handlelength=2.2, columnspacing=1.0, borderaxespad=0)
            return _svg(fig, f"curve{design}-{slug(sl.stage_name(s))}-", keep)


def mc_histogram(s: Stage, design: int) -> str:
    """The Monte Carlo's output errors with the ±99.7 % bound marked."""
    hist = s.get("histogram")
    if not hist or not hist.get("counts"):
        return ""
    edges, counts = hist["edges_v"], hist["counts"]
    bound = hist.get("bound_v")
    span = max(abs(edges[0]), abs(edges[-1]), bound or 0.0)
    factor, unit = scale_for(span or 1.0)
    hist_id = element_id("hist", design, s)
    keep = {hist_id, f"{hist_id}-bound"}
    with _LOCK:
        import matplotlib as mpl

        with mpl.rc_context(cast("dict[Any, Any]", _STYLE)):
            fig = _figure(4.6, 3.1)
            ax = fig.add_axes((0.14, 0.15, 0.83, 0.64))
            ax.stairs(counts, edges, fill=True, color=COLOURS["hist"], linewidth=0,
                      gid=hist_id)
            ax.stairs(counts, edges, color="#2B6C99", linewidth=0.7)
            top = max(counts) if max(counts) else 1
            if bound is not None:
                for i, x in enumerate((-bound, bound)):
                    ax.axvline(x, color=INK, linewidth=1.1, linestyle=(0, (4, 2)),
                               gid=f"{hist_id}-bound" if i else None)
                ax.annotate("", xy=(bound, top * 1.1), xytext=(-bound, top * 1.1),
                            arrowprops={"arrowstyle": "<|-|>,head_length=0.4,head_width=0.18",
                                        "color": INK, "linewidth": 0.9, "shrinkA": 0,
                                        "shrinkB": 0})
                ax.text(0, top * 1.13, f"99.7 % within ±{sl.volts(bound)}", ha="center",
                        va="bottom", fontsize=7.5, backgroundcolor="white")
            ax.set_xlim(-span * 1.05, span * 1.05)
            ax.set_ylim(0, top * 1.28)
            _volts_axis(ax.xaxis, factor, nbins=8)
            at = hist.get("temp_c")
            ax.set_xlabel(f"output error ({unit})" + (f" at {at:g} °C" if at is not None
                                                      else ""))
            ax.set_ylabel(f"samples (of {hist.get('samples', sum(counts))})")
            ax.grid(axis="y", color=GRID, linewidth=0.6)
            ax.set_axisbelow(True)
            for side in ("top", "right"):
                ax.spines[side].set_visible(False)
            return _svg(fig, f"hist{design}-{slug(sl.stage_name(s))}-", keep)


def chain_edges(stages: list[Stage]) -> list[tuple[str, str]]:
    """(from, to) stage identifiers: one stage's output reaches the other's input. From
    ``driven_by``; a result without it (an older stored one) falls back on ``upstream``."""
    names = {sl.stage_name(s) for s in stages}
    edges = []
    for s in stages:
        feeders = s.get("driven_by")
        if feeders is None:
            feeders = [u["id"] for u in s.get("upstream") or ()]
        edges += [(f, sl.stage_name(s)) for f in feeders if f in names]
    return edges


def has_loops(stages: list[Stage]) -> bool:
    """Some arrow of the chain view goes back (a stage fed from one it feeds)."""
    edges = chain_edges(stages)
    nodes = sorted({n for e in edges for n in e})
    depth = _depths(nodes, edges)
    return any(depth[b] <= depth[a] for a, b in edges)


def _depths(nodes: list[str], edges: list[tuple[str, str]]) -> dict[str, int]:
    """Column of each node: the longest path reaching it (edges closing a loop ignored)."""
    feeders: dict[str, list[str]] = {n: [] for n in nodes}
    for a, b in edges:
        feeders[b].append(a)
    depth: dict[str, int] = {}

    def visit(node: str, path: set[str]) -> int:
        if node in depth:
            return depth[node]
        found = 0
        for f in feeders[node]:
            if f not in path:
                found = max(found, visit(f, path | {node}) + 1)
        depth[node] = found
        return found

    for n in nodes:
        visit(n, set())
    return depth


_GAP_LANE = 0.09  # inches between the lanes of arrows going back


def _route(a: tuple[float, float], b: tuple[float, float], width: float, height: float,
           gap: float, floor: float, lane: int) -> list[tuple[float, float]]:
    """The points of the arrow from the box at ``a`` to the box at ``b`` (lower-left
    corners, inches). Forward: right side to left side, straight. Within a column: out of
    the right side, along the gap beside the column, into the right side. Going back:
    out of the right side, down the gap to ``floor`` below every box, back along it, up
    the gap before the target and into its left side. ``lane`` keeps arrows going back
    apart."""
    (xa, ya), (xb, yb) = a, b
    out_a = (xa + width, ya + height / 2)
    if xb > xa:
        return [out_a, (xb, yb + height / 2)]
    offset = (lane + 1) * _GAP_LANE
    if xb == xa:
        x = xa + width + min(offset, gap / 2)
        return [out_a, (x, out_a[1]), (x, yb + height / 2), (xb + width, yb + height / 2)]
    x_out = xa + width + min(offset, gap / 2)
    x_in = xb - min(offset, gap / 2)
    y = floor - lane * _GAP_LANE
    return [out_a, (x_out, out_a[1]), (x_out, y), (x_in, y), (x_in, yb + height / 2),
            (xb, yb + height / 2)]


def chain_view(stages: list[Stage], design: int) -> str:
    """The stages that feed one another as boxes (own error at 25 °C, total over
    temperature) with an arrow, labelled with the gain, from each feeding stage."""
    edges = chain_edges(stages)
    if not edges:
        return ""
    by_name = {sl.stage_name(s): s for s in stages}
    nodes = [n for n in by_name if any(n in e for e in edges)]
    depth = _depths(nodes, edges)
    columns: dict[int, list[str]] = {}
    for n in nodes:
        columns.setdefault(depth[n], []).append(n)
    box_w, box_h, pitch_x, pitch_y, margin = 2.15, 0.84, 3.05, 1.12, 0.12
    back = [e for e in edges if depth[e[1]] <= depth[e[0]]]
    left = margin + (0.45 if any(depth[b] == 0 for _, b in back) else 0.0)
    width = left + margin + box_w + pitch_x * (max(columns) if columns else 0) + 0.3
    below = (0.25 + _GAP_LANE * len(back)) if back else 0.0
    height = (margin * 2 + box_h + pitch_y * (max(len(c) for c in columns.values()) - 1)
              + below)
    place = {n: (left + pitch_x * d, height - margin - box_h - pitch_y * i)
             for d, col in columns.items() for i, n in enumerate(col)}
    floor = margin + below - 0.12
    keep: set[str] = set()
    with _LOCK:
        import matplotlib as mpl
        from matplotlib.patches import FancyArrowPatch, FancyBboxPatch
        from matplotlib.path import Path

        with mpl.rc_context(cast("dict[Any, Any]", _STYLE)):
            fig = _figure(width, height)
            ax = fig.add_axes((0, 0, 1, 1))
            ax.set_xlim(0, width)
            ax.set_ylim(0, height)
            ax.axis("off")
            for n in nodes:
                s = by_name[n]
                x, y = place[n]
                box_id = element_id("box", design, n)
                keep.add(box_id)
                colour = _verdict_colour(s)
                ax.add_patch(FancyBboxPatch((x, y), box_w, box_h,
                                            boxstyle="round,pad=0,rounding_size=0.06",
                                            facecolor="#F7F9FB", edgecolor=colour,
                                            linewidth=1.6, gid=box_id))
                ax.text(x + 0.1, y + box_h - 0.17, n, fontweight="bold", fontsize=9,
                        va="center")
                ax.text(x + box_w - 0.1, y + box_h - 0.17,
                        f"{s.get('value', '')} · {s.get('topology', '')}", fontsize=7,
                        va="center", ha="right", color="#52606D")
                ax.text(x + 0.1, y + box_h - 0.44,
                        f"own {sl.volts(s.get('worst_case_own_v'))} at 25 °C", fontsize=8,
                        va="center")
                at = s.get("worst_temp_c")
                total = (f"total {sl.volts(s.get('worst_case_over_temp_v'))}"
                         + (f" at {at:g} °C" if at is not None else ""))
                ax.text(x + 0.1, y + box_h - 0.68, total, fontsize=8, va="center",
                        fontweight="bold", color=colour if verdict(s) == "FAIL" else INK)
            gains = {(u["id"], sl.stage_name(s)): u.get("gain") for s in stages
                     for u in s.get("upstream") or ()}
            lane = 0
            for a, b in edges:
                forward = depth[b] > depth[a]
                points = _route(place[a], place[b], box_w, box_h, pitch_x - box_w, floor,
                                0 if forward else lane)
                lane += 0 if forward else 1
                arrow_id = f"arrow-{design}-{slug(a)}-{slug(b)}"
                keep.add(arrow_id)
                ax.add_patch(FancyArrowPatch(
                    path=Path(points), arrowstyle="-|>,head_length=5,head_width=2.6",
                    color=INK if forward else "#52606D", linewidth=1.1,
                    linestyle="-" if forward else (0, (4, 2)), gid=arrow_id))
                gain = gains.get((a, b))
                if gain is not None and forward:  # loops: the gains are listed per stage
                    # in the gap before the box it enters (it may pass other boxes)
                    (x0, y0), (x1, y1) = points[0], points[-1]
                    x = max(x1 - 0.45, (x0 + x1) / 2)
                    ax.text(x, y0 + (y1 - y0) * (x - x0) / (x1 - x0) + 0.04,
                            f"×{sl.gain_text(gain)}", ha="center", va="bottom", fontsize=7,
                            color="#52606D",
                            bbox={"facecolor": "white", "edgecolor": "none", "pad": 0.6})
            return _svg(fig, f"chain{design}-", keep)
