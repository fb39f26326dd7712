"""Pictures of the HTML report: inline SVG drawn with matplotlib (Agg-free SVG backend).

Only values the results carry are plotted (checks, ``sweeps``, ``monte_carlo``); nothing is
computed here. matplotlib is imported when a picture is drawn, not when the package is
imported. Output is deterministic: a fixed hash salt for the SVG ids, no date in the
metadata, text kept as text (``svg.fonttype = "none"``), math text off so that user text
is drawn as typed; matplotlib escapes every text it writes into the SVG.
"""

from __future__ import annotations

import io
import math
import re

from .view import ROLE_ORDER, STATUS_COLOURS, OTHER_COLOUR, display_value, eng_scale

# Hatches repeat the status for a black-and-white print (colour only repeats the word).
HATCHES = {"fail": "xxx", "marginal": "///", "waived": "..", "pass": "", "info": ""}
LIMIT_COLOUR = "#b3261e"
LINE_COLOUR = "#2f4858"
_RC = {"svg.hashsalt": "stresscheck", "svg.fonttype": "none", "text.parse_math": False,
       "font.family": "DejaVu Sans", "font.size": 8, "axes.titlesize": 8.5,
       "axes.labelsize": 8, "xtick.labelsize": 7, "ytick.labelsize": 7,
       "legend.fontsize": 7, "axes.spines.top": False, "axes.spines.right": False}
_SVG_OPEN = re.compile(r"<svg\b[^>]*>", re.S)


def _figure(width: float, height: float, **margins):
    """A figure with fixed margins (a layout engine would cost a drawing pass or more)."""
    from matplotlib.figure import Figure
    fig = Figure(figsize=(width, height), layout=None)
    fig.subplots_adjust(**margins)
    return fig


def _svg(fig, label: str) -> str:
    """The figure as an inline ``<svg>`` element (no XML prolog; natural size, shrunk to
    the page width where narrower)."""
    import matplotlib
    buf = io.StringIO()
    with matplotlib.rc_context(_RC):
        fig.savefig(buf, format="svg", metadata={"Date": None})
    text = buf.getvalue()
    text = text[text.index("<svg"):]
    match = _SVG_OPEN.search(text)
    tag = match.group(0)
    safe_label = (label.replace("&", "&amp;").replace('"', "&quot;")
                  .replace("<", "&lt;").replace(">", "&gt;"))
    tag = tag.replace("<svg", f'<svg class="chart" role="img" aria-label="{safe_label}" '
                      'style="max-width:100%;height:auto"', 1)
    return tag + text[match.end():]


def _colour(status) -> str:
    return "#" + STATUS_COLOURS.get(status, OTHER_COLOUR)


def _finite(x) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)


def ratio_bars(results: dict) -> str | None:
    """Every check's ratio against its limit: one bar per check, grouped by role.

    Returns
    -------
    str or None
        Inline SVG, or None when no check has a ratio.
    """
    import matplotlib
    order = {role: i for i, role in enumerate(ROLE_ORDER)}
    rows = [c for c in results.get("checks") or () if _finite(c.get("ratio"))]
    if not rows:
        return None
    rows = sorted(enumerate(rows), key=lambda ic: (order.get(ic[1].get("role"), len(order)),
                                                   str(ic[1].get("role")), ic[0]))
    rows = [c for _, c in rows]
    with matplotlib.rc_context(_RC):
        width = max(6.0, min(16.0, 1.5 + 0.13 * len(rows)))
        fig = _figure(width, 3.6, left=0.55 / width, right=1 - 0.1 / width, top=0.97,
                      bottom=0.33)
        ax = fig.add_subplot()
        x = list(range(len(rows)))
        ratios = [100.0 * c["ratio"] for c in rows]
        bars = ax.bar(x, ratios, width=0.8, edgecolor="#444444", linewidth=0.4,
                      color=[_colour(c.get("status")) for c in rows])
        for bar, c in zip(bars, rows):
            bar.set_hatch(HATCHES.get(c.get("status"), ""))
        ax.axhline(100.0, color=LIMIT_COLOUR, linewidth=1.2, linestyle="--")
        ax.text(len(rows) - 0.5, 101.5, "limit (100 % of allowed)", color=LIMIT_COLOUR,
                ha="right", va="bottom", fontsize=7)
        ax.set_xticks(x, [f"{c.get('ref')} {c.get('quantity')}" for c in rows],
                      rotation=90, fontsize=6)
        ax.set_xlim(-0.7, len(rows) - 0.3)
        ax.set_ylabel("ratio [% of allowed]")
        ax.set_ylim(0, max(110.0, max(ratios) * 1.08))
        start, n_group = 0, 0
        for i in range(1, len(rows) + 1):
            if i == len(rows) or rows[i].get("role") != rows[start].get("role"):
                if i < len(rows):
                    ax.axvline(i - 0.5, color="#8a969f", linewidth=0.6)
                # narrow neighbouring groups: labels on alternate lines
                ax.text((start + i - 1) / 2, 0.99 - 0.06 * (n_group % 2),
                        str(rows[start].get("role")),
                        transform=ax.get_xaxis_transform(), ha="center", va="top",
                        fontsize=6.5, color="#5b6670")
                start, n_group = i, n_group + 1
        return _svg(fig, "Ratio of every check to its limit, grouped by role")


def _corner_label(corner: dict, units: dict) -> str:
    from .view import format_value
    parts = []
    for key in ("output_current", "ambient_temperature"):
        if key in corner:
            parts.append(format_value(corner[key], units.get(key)))
    return ", ".join(parts)


def input_axis_label(results: dict) -> str:
    """Label of an input-voltage axis: ``input voltage [V rms]`` for an AC input (the
    design's ``[operating] input = "ac"``: input_voltage is an rms line voltage), else
    ``input voltage [V]``. The results show an AC input by its ``line_frequency`` corner
    key, which a design has exactly when its input is "ac" (stresscheck.design)."""
    ac = "line_frequency" in (results.get("corner_keys") or ())
    return "input voltage [V rms]" if ac else "input voltage [V]"


def sweep_groups(results: dict) -> list[dict]:
    """Sweeps of the results grouped by ref: refs whose every sweep is identical share
    one picture. Each group: ``{"refs": [...], "role", "part", "sweeps": [...]}``."""
    checks = {(c.get("ref"), c.get("quantity")): c for c in results.get("checks") or ()}
    by_ref: dict = {}
    for s in results.get("sweeps") or ():
        by_ref.setdefault(s.get("ref"), []).append(s)
    groups: list[dict] = []
    for ref, sweeps in by_ref.items():
        check = checks.get((ref, sweeps[0].get("quantity"))) or {}
        key = [(s.get("quantity"), s.get("input_voltage"), s.get("stress"),
                (checks.get((ref, s.get("quantity"))) or {}).get("allowed")) for s in sweeps]
        for g in groups:
            if g["key"] == key and g["part"] == check.get("part"):
                g["refs"].append(ref)
                break
        else:
            groups.append({"key": key, "refs": [ref], "role": check.get("role"),
                           "part": check.get("part"), "sweeps": sweeps})
    return groups


def sweep_chart(group: dict, results: dict) -> str:
    """Key stresses of one switch or rectifier (or identical group) across the input
    voltage range, at each check's governing load and temperature, limit drawn."""
    import matplotlib
    checks = {(c.get("ref"), c.get("quantity")): c for c in results.get("checks") or ()}
    corners = {c.get("id"): c for c in results.get("corners") or ()}
    units = results.get("corner_units") or {}
    sweeps = group["sweeps"]
    ref = group["refs"][0]
    x_label = input_axis_label(results)
    with matplotlib.rc_context(_RC):
        width = min(3.0 * len(sweeps), 14.0)
        fig = _figure(width, 2.6, left=0.55 / width, right=1 - 0.1 / width, top=0.88,
                      bottom=0.18, wspace=0.45)
        axes = fig.subplots(1, len(sweeps), squeeze=False)[0]
        for ax, s in zip(axes, sweeps):
            check = checks.get((ref, s.get("quantity"))) or {}
            q, unit = s.get("quantity"), s.get("unit")
            values = [display_value(v, unit, q)[0] if _finite(v) else None
                      for v in s.get("stress") or ()]
            allowed = check.get("allowed")
            allowed = display_value(allowed, unit, q)[0] if _finite(allowed) else None
            scale, label = eng_scale([v for v in values if v is not None] + [allowed], unit)
            if unit == "degC":
                scale, label = 1.0, "°C"
            xs = s.get("input_voltage") or []
            pts = [(x, v / scale) for x, v in zip(xs, values) if v is not None]
            if pts:
                ax.plot([p[0] for p in pts], [p[1] for p in pts], marker="o", markersize=3.5,
                        color=LINE_COLOUR, linewidth=1.2, label="stress")
            ids = s.get("corners") or []
            for cid, x, v in zip(ids, xs, values):
                if v is None:
                    continue
                kind = (corners.get(cid) or {}).get("kind")
                if cid == s.get("corner"):
                    ax.plot([x], [v / scale], marker="o", markersize=7, fillstyle="none",
                            color=LIMIT_COLOUR if check.get("status") == "fail"
                            else LINE_COLOUR, linewidth=0)
                if kind == "transient":
                    ax.annotate("surge", (x, v / scale), textcoords="offset points",
                                xytext=(-4, 5), ha="right", fontsize=6.5, color="#5b6670")
            if allowed is not None:
                ax.axhline(allowed / scale, color=LIMIT_COLOUR, linestyle="--", linewidth=1.1,
                           label="allowed")
            top = max([p[1] for p in pts] + ([allowed / scale] if allowed is not None
                                             else []) + [0.0])
            ax.set_ylim(min(0.0, min([p[1] for p in pts] + [0.0])), top * 1.15 or 1.0)
            ax.set_xlabel(x_label)
            ax.set_ylabel(f"{q} [{label}]" if label else str(q))
            where = _corner_label(corners.get(s.get("corner")) or {}, units)
            ax.set_title(f"{q}" + (f" at {where}" if where else ""))
        axes[0].legend(loc="lower left", frameon=False)
        refs = ", ".join(str(r) for r in group["refs"])
        return _svg(fig, f"Stresses of {refs} across the input voltage range")


def monte_carlo_chart(check: dict) -> str | None:
    """Distribution of a sampled stress against its limit: a histogram where the check
    carries ``monte_carlo.histogram = {edges, counts}``, else its percentiles."""
    import matplotlib
    mc = check.get("monte_carlo")
    if not isinstance(mc, dict):
        return None
    unit, q = check.get("unit"), check.get("quantity")

    def shown(v):
        return display_value(v, unit, q)[0] if _finite(v) else None

    allowed = shown(check.get("allowed"))
    hist = mc.get("histogram") if isinstance(mc.get("histogram"), dict) else None
    points = [(k, shown(mc.get(k))) for k in ("p50", "p95", "p99", "max")]
    points = [(k, v) for k, v in points if v is not None]
    if not points and not hist:
        return None
    label = display_value(0.0, unit, q)[1]
    with matplotlib.rc_context(_RC):
        fig = _figure(4.2, 2.3, left=0.14, right=0.97, top=0.88, bottom=0.2)
        ax = fig.add_subplot()
        if hist and hist.get("edges") and hist.get("counts"):
            edges = [shown(e) for e in hist["edges"]]
            counts = hist["counts"]
            ax.stairs(counts, edges, fill=True, color="#9fb3c2", edgecolor=LINE_COLOUR)
            ax.set_ylabel("samples")
        else:
            ax.set_yticks([])
        for i, (k, v) in enumerate(points):
            ax.axvline(v, color=LINE_COLOUR, linewidth=0.8, linestyle=":")
            ax.text(v, 0.95 - 0.12 * i, f" {k}", transform=ax.get_xaxis_transform(),
                    fontsize=6.5, va="top")
        if allowed is not None:
            ax.axvline(allowed, color=LIMIT_COLOUR, linestyle="--", linewidth=1.2)
            ax.text(allowed, 0.02, "allowed ", transform=ax.get_xaxis_transform(),
                    color=LIMIT_COLOUR, fontsize=6.5, ha="right")
        ax.set_xlabel(f"{q} [{label}]" if label else str(q))
        n = mc.get("samples")
        ax.set_title(f"{check.get('ref')} {q}" + (f", {n} samples" if n else ""))
        return _svg(fig, f"Monte Carlo distribution of {check.get('ref')} {q}")
