"""Matplotlib plots of sweeps: profit and decisions against the varied input
with active-set regions marked, and for a grid a map of active-set regions.

Written atomically (rendered to memory, then moved into place); the safety
notice is printed on every figure.
"""

from __future__ import annotations

import io
from pathlib import Path
from typing import Any

import numpy as np

from plantopt.results import SAFETY_NOTICE


def _region_ids(rows: list[dict]) -> tuple[list[int | None], list[str]]:
    labels: list[str] = []
    ids: list[int | None] = []
    for r in rows:
        if r.get("status") != "optimal":
            ids.append(None)
            continue
        s = r.get("active_set") or "(none)"
        if s not in labels:
            labels.append(s)
        ids.append(labels.index(s))
    return ids, labels


def _short(label: str) -> str:
    return ", ".join(p.split(":", 1)[1] for p in label.split(";")) if label != "(none)" else "(none)"


def plot_sweep(result: Any, path: str | Path, *, title: str = "") -> None:
    """Plot a :class:`plantopt.studies.sweep.SweepResult` to ``path`` (.png, .svg, .pdf)."""
    import matplotlib

    matplotlib.use("Agg")  # files only; never needs a display
    import matplotlib.pyplot as plt

    from plantopt.reports.io import atomic_write_bytes

    rows = result.rows
    ids, labels = _region_ids(rows)
    cmap = plt.get_cmap("tab10")
    if len(result.axes) >= 2:
        fig = _grid_map(plt, result, ids, labels, cmap)
    else:
        fig = _line(plt, result, ids, labels, cmap)
    fig.suptitle((title + "\n" if title else "") + SAFETY_NOTICE, fontsize=7, y=1.02)
    buf = io.BytesIO()
    fmt = Path(path).suffix.lstrip(".").lower() or "png"
    fig.savefig(buf, format=fmt, dpi=110, bbox_inches="tight")
    plt.close(fig)
    atomic_write_bytes(path, buf.getvalue())


def _line(plt, result, ids, labels, cmap):
    rows = result.rows
    if result.axes:
        xname = result.axes[0].path
        xlabel = f"{xname} [{result.axes[0].unit}]" if result.axes[0].unit else xname
        x = np.array([r[xname] for r in rows], dtype=float)
    else:  # scenarios: in row order
        xlabel, x = "scenario", np.arange(len(rows), dtype=float)
    dec_cols = [c for c in result.columns if c.startswith("decision.")]
    n = 1 + len(dec_cols)
    ncols = 2
    nrows = (n + 1) // 2
    fig, axs = plt.subplots(nrows, ncols, figsize=(11, 2.6 * nrows), sharex=True, squeeze=False)
    series = [("objective", f"profit [{result.profit_unit}]")] + [(c, c.replace("decision.", "")) for c in dec_cols]
    cuts = [b.value for b in result.breakpoints if b.status == "located"] if result.axes else []
    edges = _region_edges(x, ids, cuts)
    for k, ax in enumerate(axs.flat):
        if k >= n:
            ax.axis("off")
            continue
        col, lab = series[k]
        y = np.array([r.get(col) if r.get(col) is not None else np.nan for r in rows], dtype=float)
        ok = np.array([i is not None for i in ids])
        for lo, hi, rid in edges:
            ax.axvspan(lo, hi, color=cmap(rid % 10), alpha=0.15, lw=0)
        ax.plot(x[ok], y[ok], "o-", ms=3, color="k", lw=1)
        if (~ok).any():
            ax.plot(x[~ok], y[~ok], "x", color="r", ms=6, label="not optimal")
        for b in result.breakpoints:
            if b.status == "located":
                ax.axvline(b.value, color="0.3", ls="--", lw=0.8)
        ax.set_ylabel(lab, fontsize=8)
        ax.tick_params(labelsize=7)
    for ax in axs[-1]:
        ax.set_xlabel(xlabel, fontsize=8)
    handles = [plt.Rectangle((0, 0), 1, 1, color=cmap(i % 10), alpha=0.3) for i in range(len(labels))]
    fig.legend(handles, [f"{chr(65 + i)}: {_short(l)}" for i, l in enumerate(labels)], loc="lower center",
               fontsize=7, ncol=1, frameon=False, bbox_to_anchor=(0.5, -0.02 - 0.025 * len(labels)))
    fig.tight_layout()
    return fig


def _region_edges(x: np.ndarray, ids: list[int | None], cuts: list[float] = ()) -> list[tuple[float, float, int]]:
    """Spans of equal active set along a line: split at a located breakpoint
    between two points where there is one, else halfway."""
    def edge(a: float, b: float) -> float:
        inside = [c for c in cuts if min(a, b) <= c <= max(a, b)]
        # the breakpoint nearest the left point belongs to the left point's region
        return min(inside, key=lambda c: abs(c - a)) if inside else (a + b) / 2

    out = []
    for i, rid in enumerate(ids):
        if rid is None:
            continue
        lo = edge(x[i - 1], x[i]) if i > 0 else x[i]
        if i > 0:
            inside = [c for c in cuts if min(x[i - 1], x[i]) <= c <= max(x[i - 1], x[i])]
            lo = max(inside, key=lambda c: abs(c - x[i - 1])) if inside else lo
        hi = edge(x[i], x[i + 1]) if i + 1 < len(x) else x[i]
        out.append((lo, hi, rid))
    return out


def _grid_map(plt, result, ids, labels, cmap):
    a0, a1 = result.axes[0], result.axes[1]
    n0, n1 = len(a0.values), len(a1.values)
    rows = result.rows
    # extra axes (3+) are shown at their first value only
    stride = int(np.prod([len(a.values) for a in result.axes[2:]])) if len(result.axes) > 2 else 1
    grid = np.full((n0, n1), np.nan)
    prof = np.full((n0, n1), np.nan)
    for r, rid in zip(rows, ids):
        p = int(r["point"])
        if p % stride:
            continue
        i, j = divmod(p // stride, n1)
        if rid is not None:
            grid[i, j] = rid
            prof[i, j] = float(r["objective"])
    fig, ax = plt.subplots(figsize=(8, 6))
    from matplotlib.colors import BoundaryNorm, ListedColormap

    k = max(len(labels), 1)
    cm = ListedColormap([cmap(i % 10) for i in range(k)])
    ax.pcolormesh(np.array(a1.values), np.array(a0.values), grid, cmap=cm,
                  norm=BoundaryNorm(np.arange(-0.5, k + 0.5), k), shading="nearest", alpha=0.6)
    if np.isfinite(prof).sum() >= 4 and n0 > 1 and n1 > 1:
        cs = ax.contour(np.array(a1.values), np.array(a0.values), prof, colors="k", linewidths=0.7)
        ax.clabel(cs, fontsize=6, fmt="%.0f")
    bad = [(a1.values[(int(r["point"]) // stride) % n1], a0.values[(int(r["point"]) // stride) // n1])
           for r, rid in zip(rows, ids) if rid is None and int(r["point"]) % stride == 0]
    if bad:
        bx, by = zip(*bad)
        ax.plot(bx, by, "rx", label="not optimal")
    for b in result.breakpoints:
        if b.status != "located":
            continue
        if b.path == a0.path and a1.path in b.fixed:
            ax.plot(b.fixed[a1.path], b.value, "k.", ms=4)
        elif b.path == a1.path and a0.path in b.fixed:
            ax.plot(b.value, b.fixed[a0.path], "k.", ms=4)
    ax.set_xlabel(f"{a1.path} [{a1.unit}]" if a1.unit else a1.path, fontsize=8)
    ax.set_ylabel(f"{a0.path} [{a0.unit}]" if a0.unit else a0.path, fontsize=8)
    handles = [plt.Rectangle((0, 0), 1, 1, color=cmap(i % 10), alpha=0.6) for i in range(len(labels))]
    ax.legend(handles, [f"{chr(65 + i)}: {_short(l)}" for i, l in enumerate(labels)], fontsize=6,
              loc="upper center", bbox_to_anchor=(0.5, -0.12), frameon=False)
    ax.set_title(f"active-set regions; contours: profit [{result.profit_unit}]; dots: breakpoints", fontsize=8)
    fig.tight_layout()
    return fig
