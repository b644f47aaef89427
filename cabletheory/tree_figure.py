"""Figures of a whole tree: its morphology coloured by the electrotonic map, and the soma's response
of the tree beside that of its reduction.

Plain functions that return image bytes (PNG, SVG or PDF); matplotlib is imported inside them,
so importing this module costs nothing. Both front ends may use them; the numbers come from the
core (:mod:`cabletheory.tree_time`) and are only drawn here.

The drawing of a tree: with the SWC points' own coordinates when the file has them (projected
on the x-y plane, the soma a disc of its area), otherwise a dendrogram of our own layout: path
distance from the root across, the tips one above the other, each branch point half-way
between its children. Each piece is cut into a few strokes whose colour runs from its
proximal node's value to its distal node's (log-interpolated for attenuations), so that long
branches of an outline show the gradient along them.

Every value drawn assumes a passive, linear membrane (:data:`cabletheory.PASSIVE_CAVEAT`).

References
----------
Zador AM, Agmon-Snir H & Segev I (1995) J. Neurosci. 15:1669 [ZadorAgmonSnirSegev1995] (log
attenuation and delay over a tree, the morphoelectrotonic transform).
Agmon-Snir H & Segev I (1993) J. Neurophysiol. 70:2066 [AgmonSnirSegev1993] (centroid delays).
"""

from __future__ import annotations

import io
import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .errors import InputError
from .morphology import SwcPoints
from .tree import Tree

__all__ = ["MAP_QUANTITIES", "MapColouring", "dendrogram_layout", "draw_map", "draw_reduction_cost",
           "map_colouring", "swc_layout"]

Array = NDArray[np.float64]

# what a map figure can be coloured by: (ElectrotonicMap attribute, legend words, logarithmic)
MAP_QUANTITIES: dict[str, tuple[str, str, bool]] = {
    "attenuation-to-soma": ("attenuation_to_root", "attenuation to the soma, V(point)/V(soma)", True),
    "attenuation-from-soma": ("attenuation_from_root", "attenuation from the soma, V(soma)/V(point)", True),
    "delay-to-soma": ("delay_to_root", "centroid delay to the soma (ms)", False),
    "delay-from-soma": ("delay_from_root", "centroid delay from the soma (ms)", False),
}

_IMAGE_FORMATS = ("png", "svg", "pdf")


@dataclass(frozen=True, slots=True)
class MapColouring:
    """The values a map figure is coloured by: one at the root, then one per piece's distal node.

    ``values`` in the unit shown (ms for delays); ``log`` draws them on a logarithmic scale.
    """

    name: str
    label: str
    values: Array
    log: bool


def map_colouring(electrotonic_map: object, name: str) -> MapColouring:
    """The colouring ``name`` (a key of :data:`MAP_QUANTITIES`) of an
    :class:`~cabletheory.tree_time.ElectrotonicMap`; delays are shown in ms."""
    attribute, label, log = MAP_QUANTITIES[name]
    values = np.asarray(getattr(electrotonic_map, attribute), dtype=float)
    if not log:
        values = values * 1e3
    return MapColouring(name=name, label=label, values=values, log=log)


def _children(parents: NDArray[np.int64]) -> list[list[int]]:
    kids: list[list[int]] = [[] for _ in range(parents.size + 1)]  # node 0 the root, node i+1 piece i
    for i, p in enumerate(parents.tolist()):
        kids[p + 1].append(i + 1)
    return kids


def dendrogram_layout(tree: Tree) -> tuple[Array, Array]:
    """(x, y) of the root and of every piece's distal node, m: path distance across, tips stacked.

    Tips are one unit apart in y (scaled to 4 % of the tree's longest path each, so the drawing
    keeps a sensible aspect); a node sits half-way between its first and last child.
    """
    parents = np.asarray(tree.parents, dtype=np.int64)
    lengths = np.asarray(tree.lengths, dtype=float)
    n = parents.size
    x = np.zeros(n + 1)
    for i in range(n):
        x[i + 1] = x[parents[i] + 1] + lengths[i]
    kids = _children(parents)
    y = np.zeros(n + 1)
    next_tip = 0.0
    # depth-first, children in file order, without recursion (deep SWC chains)
    order: list[tuple[int, bool]] = [(0, False)]
    while order:
        node, done = order.pop()
        if done or not kids[node]:
            if kids[node]:
                y[node] = 0.5 * (y[kids[node][0]] + y[kids[node][-1]])
            else:
                y[node] = next_tip
                next_tip += 1.0
            continue
        order.append((node, True))
        order.extend((k, False) for k in reversed(kids[node]))
    spacing = 0.04 * max(float(x.max()), 1e-9)
    return x, -y * spacing


def swc_layout(tree: Tree, points: SwcPoints) -> tuple[Array, Array, float] | None:
    """(x, y) of the root and of every piece's distal node from the SWC coordinates (m), and the
    soma's drawn radius (m, 0 without a soma); None when a label is not an SWC point."""
    index = {str(int(i)): k for k, i in enumerate(points.ids.tolist())}
    try:
        rows = [index[label] for label in tree.labels]
    except KeyError:
        return None
    xy = np.asarray(points.positions, dtype=float)[:, :2]
    x = np.concatenate(([xy[0, 0]], xy[rows, 0]))
    y = np.concatenate(([xy[0, 1]], xy[rows, 1]))
    radius = 0.0 if tree.soma_area is None else math.sqrt(tree.soma_area / (4 * math.pi))
    return x, y, radius


def _strokes(parents: NDArray[np.int64], x: Array, y: Array, values: Array, log: bool,
             pieces_per: int) -> tuple[Array, Array]:
    """Line segments ((m, 2, 2), m) and their colour values, each piece cut ``pieces_per`` times."""
    start = parents + 1
    end = np.arange(parents.size) + 1
    f = np.linspace(0.0, 1.0, pieces_per + 1)
    x0 = x[start][:, None] + (x[end] - x[start])[:, None] * f[None, :]
    y0 = y[start][:, None] + (y[end] - y[start])[:, None] * f[None, :]
    a, b = values[start], values[end]
    mid = 0.5 * (f[:-1] + f[1:])
    if log:
        with np.errstate(divide="ignore", invalid="ignore"):
            colour = np.exp(np.log(a)[:, None] + (np.log(b) - np.log(a))[:, None] * mid[None, :])
        colour = np.where(np.isfinite(colour), colour, b[:, None])
    else:
        colour = a[:, None] + (b - a)[:, None] * mid[None, :]
    segments = np.stack([np.stack([x0[:, :-1], y0[:, :-1]], axis=-1), np.stack([x0[:, 1:], y0[:, 1:]], axis=-1)],
                        axis=2)
    return segments.reshape(-1, 2, 2), colour.ravel()


def _figure_bytes(fig: object, image_format: str) -> bytes:
    buffer = io.BytesIO()
    fig.savefig(buffer, format=image_format)  # type: ignore[attr-defined]
    return buffer.getvalue()


def _check_format(image_format: str) -> None:
    if image_format not in _IMAGE_FORMATS:
        raise InputError(f"image format must be one of {', '.join(_IMAGE_FORMATS)}, got {image_format!r}")


def draw_map(tree: Tree, colouring: MapColouring, *, points: SwcPoints | None = None, title: str = "",
             note: str = "", image_format: str = "png") -> bytes:
    """The tree drawn with every piece coloured by ``colouring`` (values at the root and at each
    piece's distal node); SWC coordinates when ``points`` is given, else a dendrogram.

    Colour map 'cividis' (ordered, readable in grey and by colour-blind readers); the root is
    marked by a black-edged disc; the scale bar is in µm.
    """
    _check_format(image_format)
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.collections import LineCollection
    from matplotlib.colors import LogNorm, Normalize
    from matplotlib.figure import Figure

    parents = np.asarray(tree.parents, dtype=np.int64)
    laid = swc_layout(tree, points) if points is not None else None
    if laid is None:
        x, y = dendrogram_layout(tree)
        radius, drawing = 0.0, "dendrogram: path distance from the soma across, tips stacked"
    else:
        x, y, radius = laid
        drawing = "x-y projection of the file's coordinates"
    values = np.asarray(colouring.values, dtype=float)
    values = np.where(np.isfinite(values), values, np.nan)  # killed tips: drawn grey, outside the scale
    per = max(1, min(8, 4000 // max(parents.size, 1)))
    segments, colour = _strokes(parents, x * 1e6, y * 1e6, values, colouring.log, per)
    finite = values[np.isfinite(values)]
    if colouring.log:
        positive = finite[finite > 0]
        low = float(positive.min()) if positive.size else 1.0
        high = float(positive.max()) if positive.size else 1.0
        norm: Normalize = LogNorm(vmin=low, vmax=max(high, low * 1.0001))
    else:
        low = float(finite.min()) if finite.size else 0.0
        high = float(finite.max()) if finite.size else 1.0
        norm = Normalize(vmin=low, vmax=high if high > low else low + 1e-9)
    diameters = np.asarray(tree.distal_diameters, dtype=float) * 1e6
    widths = np.repeat(np.clip(0.6 + 0.5 * diameters, 0.6, 4.0), per)
    size = (7.2, 5.6)
    if laid is not None:  # equal axes: a figure shaped like the cell, plus room for the colour bar
        span_x, span_y = float(np.ptp(x)), float(np.ptp(y))
        if span_x > 0 and span_y > 0:
            size = (min(max(5.0 * span_x / span_y + 2.2, 6.4), 11.0), 5.6)
    fig = Figure(figsize=size, layout="constrained")
    ax = fig.add_subplot()
    palette = matplotlib.colormaps["cividis"].with_extremes(bad="#b0b0b0")
    lines = LineCollection(list(segments), array=colour, cmap=palette, norm=norm, linewidths=widths,
                           capstyle="round")
    ax.add_collection(lines)
    root_size = max(radius * 1e6, 0.0)
    ax.plot([x[0] * 1e6], [y[0] * 1e6], "o", markersize=max(6.0, min(root_size, 14.0)),
            markerfacecolor=lines.to_rgba(values[0]) if np.isfinite(values[0]) else "white",
            markeredgecolor="black", zorder=3, label=f"root: {tree.root_label}")
    ax.autoscale_view()
    ax.set_aspect("equal" if laid is not None else "auto")
    if laid is None:
        ax.set_yticks([])
        ax.set_xlabel("path distance from the soma (µm)")
    else:
        ax.set_xlabel("x (µm)")
        ax.set_ylabel("y (µm)")
    bar = fig.colorbar(lines, ax=ax, shrink=0.85)
    bar.set_label(colouring.label)
    if colouring.log:  # plain numbers (3, not 3×10⁰); minor ticks labelled too over a short range
        from matplotlib.ticker import FuncFormatter, NullFormatter

        plain = FuncFormatter(lambda v, _: f"{v:g}")
        bar.ax.yaxis.set_major_formatter(plain)
        bar.ax.yaxis.set_minor_formatter(plain if high < 10 * low else NullFormatter())
    fig.suptitle(title or "electrotonic map", fontsize="medium")
    grey = " Grey: killed tips, held at rest." if np.isnan(values).any() else ""
    fig.supxlabel(f"{drawing}. {note}{grey}".strip(), fontsize="x-small", color="#444444")
    ax.legend(loc="best", fontsize="small", frameon=False)
    return _figure_bytes(fig, image_format)


def draw_reduction_cost(times: Array, tree_voltage: Array, reduced_voltage: Array, *, reduced_model: str,
                        when: float, largest: float, title: str = "", note: str = "",
                        image_format: str = "png") -> bytes:
    """Two panels side by side: the soma's voltage of the tree and of its reduction against time,
    and their difference (reduction − tree), the largest marked. Times in ms, voltages in mV."""
    _check_format(image_format)
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.figure import Figure

    t = np.asarray(times, dtype=float) * 1e3
    tree_mv = np.asarray(tree_voltage, dtype=float) * 1e3
    reduced_mv = np.asarray(reduced_voltage, dtype=float) * 1e3
    fig = Figure(figsize=(9.0, 3.8), layout="constrained")
    left, right = fig.subplots(1, 2)
    dots = "." if t.size <= 40 else None  # a coarse grid shows its samples
    left.plot(t, tree_mv, color="#1b4f72", linewidth=2.0, marker=dots, label="whole tree (exact)")
    left.plot(t, reduced_mv, color="#d35400", linewidth=1.4, linestyle="--", label=reduced_model)
    left.set_xlabel("time (ms)")
    left.set_ylabel("soma voltage from rest (mV)")
    left.legend(loc="best", fontsize="small", frameon=False)
    left.set_title("the same stimulus at the soma", fontsize="medium")
    right.plot(t, reduced_mv - tree_mv, color="#7d3c98", linewidth=1.6, marker=dots)
    right.axhline(0.0, color="#888888", linewidth=0.8)
    if math.isfinite(when):
        k = int(np.argmin(np.abs(t - when * 1e3)))
        right.plot([t[k]], [reduced_mv[k] - tree_mv[k]], "o", color="#7d3c98")
        late = t[k] > 0.5 * (t.min() + t.max())
        right.annotate(f"largest {largest * 1e3:.3g} mV\nat {when * 1e3:.3g} ms", (t[k], reduced_mv[k] - tree_mv[k]),
                       textcoords="offset points", xytext=(-8 if late else 8, 8), fontsize="small",
                       horizontalalignment="right" if late else "left")
    right.set_xlabel("time (ms)")
    right.set_ylabel("reduction − tree (mV)")
    right.set_title("what the reduction misses", fontsize="medium")
    if title or note:
        fig.suptitle(f"{title} ({note})" if title and note else title or note, fontsize="medium")
    return _figure_bytes(fig, image_format)
