"""Summary figures and a one-page HTML report of a survey table (matplotlib imported inside)."""

from __future__ import annotations

import html
import io
import math
from collections.abc import Sequence
from typing import Any

from .. import PASSIVE_CAVEAT
from ..survey import COLUMNS, SurveySettings, header_lines

Row = dict[str, Any]


def _values(rows: Sequence[Row], name: str) -> list[float]:
    return [float(r[name]) for r in rows if r["status"] == "ok" and r[name] is not None
            and math.isfinite(float(r[name]))]


def figures_svg(rows: Sequence[Row], settings: SurveySettings) -> str:
    """Four panels as one SVG: per-cell branch ratios, tip spread, L, and the cost of reduction
    (relative input-resistance difference) against tip spread."""
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib import rcParams
    from matplotlib.figure import Figure

    rcParams["svg.hashsalt"] = "cabletheory-survey"  # the same SVG for the same table
    tol = settings.tolerances
    fig = Figure(figsize=(10.0, 7.0), layout="constrained")
    (a, b), (c, d) = fig.subplots(2, 2)
    medians, worst = _values(rows, "ratio_median"), _values(rows, "ratio_worst")
    if medians:
        import numpy as np

        bins = np.histogram_bin_edges(medians + worst, bins=40)
        a.hist(worst, bins=bins, color="#cc6622", alpha=0.55, label="farthest from 1")
        a.hist(medians, bins=bins, color="#225577", alpha=0.75, label="median")
        a.axvspan(1 - tol.branch_ratio, 1 + tol.branch_ratio, color="#88aa88", alpha=0.25, label="1 ± tolerance")
        a.legend(fontsize="small")
    a.set_xlabel(r"branch ratio $\Sigma d_{child}^{3/2} / d_{parent}^{3/2}$ per cell")
    a.set_ylabel("cells")
    a.set_title("3/2 power rule")
    spread = _values(rows, "tip_spread")
    if spread:
        b.hist(spread, bins=30, color="#225577")
        b.axvline(tol.tip_spread, color="#cc6622", linestyle="--", label="tolerance")
        b.legend(fontsize="small")
    b.set_xlabel("spread of tip electrotonic distances ΔX")
    b.set_ylabel("cells")
    b.set_title("equal tip distances")
    lengths = _values(rows, "electrotonic_length")
    if lengths:
        c.hist(lengths, bins=30, color="#225577")
    c.set_xlabel("electrotonic length L of the equivalent cylinder")
    c.set_ylabel("cells")
    c.set_title("equivalent cylinder")
    ok = [r for r in rows if r["status"] == "ok" and r["difference_percent"] is not None]
    for reducible, colour, label in ((True, "#228844", "reducible"), (False, "#aa3333", "not reducible")):
        pts = [(r["tip_spread"], r["difference_percent"]) for r in ok if bool(r["reducible"]) is reducible]
        if pts:
            d.scatter([p[0] for p in pts], [p[1] for p in pts], s=14, color=colour, label=label)
    if ok:
        d.legend(fontsize="small")
    d.axhline(0.0, color="#444444", linewidth=0.8)
    d.set_xlabel("spread of tip electrotonic distances ΔX")
    d.set_ylabel("reduced − exact input resistance (%)")
    d.set_title("cost of reduction")
    buffer = io.StringIO()
    fig.savefig(buffer, format="svg", metadata={"Date": None})
    return buffer.getvalue()


def _quantiles(values: list[float]) -> tuple[float, float, float, float, float] | None:
    if not values:
        return None
    s = sorted(values)

    def q(p: float) -> float:
        k = p * (len(s) - 1)
        lo = math.floor(k)
        hi = min(lo + 1, len(s) - 1)
        return s[lo] + (s[hi] - s[lo]) * (k - lo)

    return s[0], q(0.25), q(0.5), q(0.75), s[-1]


_SUMMARY = (
    ("ratio_median", "median branch ratio of a cell", 1.0),
    ("ratio_worst", "branch ratio farthest from 1", 1.0),
    ("tip_spread", "tip spread ΔX", 1.0),
    ("electrotonic_length", "electrotonic length L", 1.0),
    ("input_resistance_ohm", "exact input resistance (MΩ)", 1e-6),
    ("difference_percent", "cost of reduction (%)", 1.0),
    ("conductance_ratio", "ρ of the soma-plus-cylinder model", 1.0),
)


def report_html(rows: Sequence[Row], settings: SurveySettings, max_errors: int = 20) -> str:
    """A self-contained one-page HTML report: the settings, counts, quartiles, figures, errors."""
    ok = [r for r in rows if r["status"] == "ok"]
    bad = [r for r in rows if r["status"] != "ok"]
    reducible = sum(1 for r in ok if r["reducible"])
    esc = html.escape
    parts = ["<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
             "<title>cabletheory survey report</title>",
             "<style>body{font-family:sans-serif;max-width:62rem;margin:1.5rem auto;color:#222}"
             "table{border-collapse:collapse;margin:.5rem 0}td,th{padding:.15rem .6rem;text-align:right}"
             "td:first-child,th:first-child{text-align:left}tr:nth-child(even){background:#f3f3f3}"
             "h1{font-size:1.4rem}h2{font-size:1.1rem;margin-top:1.2rem}.note{color:#555;font-size:.9rem}"
             "svg{max-width:100%;height:auto}</style></head><body>",
             "<h1>Survey of an archive: Rall's conditions and the equivalent cylinder</h1>",
             f"<p><b>{len(rows)}</b> files: <b>{len(ok)}</b> analysed, <b>{len(bad)}</b> could not be read or "
             f"analysed. <b>{reducible}</b> of {len(ok)} meet Rall's conditions within the tolerances "
             f"(branch ratio 1 ± {settings.tolerances.branch_ratio:g}, tip spread ≤ "
             f"{settings.tolerances.tip_spread:g}).</p>"]
    parts.append("<h2>Across the cells</h2><table><tr><th>figure</th><th>min</th><th>lower quartile</th>"
                 "<th>median</th><th>upper quartile</th><th>max</th></tr>")
    for name, label, scale in _SUMMARY:
        qs = _quantiles(_values(rows, name))
        cells = "".join(f"<td>{v * scale:.4g}</td>" for v in qs) if qs else '<td colspan="5">-</td>'
        parts.append(f"<tr><td>{esc(label)}</td>{cells}</tr>")
    parts.append("</table>")
    parts.append("<h2>Figures</h2>" + figures_svg(rows, settings).split("?>", 1)[-1])
    if bad:
        parts.append(f"<h2>Files that could not be read or analysed ({len(bad)})</h2><ul>")
        parts += [f"<li><code>{esc(r['error'])}</code></li>" for r in bad[:max_errors]]
        if len(bad) > max_errors:
            parts.append(f"<li>... and {len(bad) - max_errors} more (see the table)</li>")
        parts.append("</ul>")
    units = {c.name: c.unit for c in COLUMNS}
    parts.append("<h2>Settings</h2><ul class=\"note\">" + "".join(
        f"<li>{esc(line)}</li>" for line in header_lines(rows, settings)[2:-2]) + "</ul>")
    parts.append(f"<p class=\"note\">Input resistances in {units['input_resistance_ohm']} in the table. "
                 f"{esc(PASSIVE_CAVEAT)}</p></body></html>")
    return "\n".join(parts) + "\n"
