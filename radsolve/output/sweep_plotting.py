"""Pictures of sweeps and fits (PNG files, matplotlib's Agg renderer).

matplotlib is imported inside the functions, through its object-oriented
interface (``Figure`` and the Agg canvas), so that importing radsolve stays
fast and no global plotting state (pyplot, the backend) is touched.

* :func:`plot_sweep` — one swept parameter: each level's energy against it,
  the continuum threshold V(inf) as a dashed line, each level's bound and
  unbound stretches in a strip below, the threshold crossings marked (between
  the last bound and first unbound sweep points, or exactly where
  :func:`radsolve.threshold` results are given).  Two swept parameters: one
  map per level, unbound points grey, the binding threshold as a contour.
* :func:`plot_fit` — computed against target levels with error bars, the
  residuals in units of the target uncertainty, and any possible spurious
  levels.
"""

from __future__ import annotations

import math
import os
from typing import Any, Mapping

import numpy as np

from radsolve.errors import InputError

_MAX_MAPS = 12


def _figure(width: float, height: float, rows: int = 1, cols: int = 1, **kwargs):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width, height), dpi=110, layout="constrained")
    FigureCanvasAgg(fig)
    axes = fig.subplots(rows, cols, squeeze=False, **kwargs)
    return fig, axes


def _save(fig, path) -> None:
    try:
        fig.savefig(os.fspath(path))
    except OSError as exc:
        raise InputError(f"cannot write the plot {os.fspath(path)!r}: {exc.strerror}") from None


def _axis_label(name: str, unit: str) -> str:
    return f"{name} ({unit})" if unit else name


def _colors(n: int):
    from matplotlib import colormaps

    cmap = colormaps["tab10" if n <= 10 else "tab20"]
    return [cmap(i % cmap.N) for i in range(n)]


def plot_sweep(result, path, unit: str | None = None, thresholds: Mapping[str, Any] | None = None,
               title: str | None = None) -> None:
    """Draw a :class:`radsolve.analysis.sweeps.SweepResult` to the PNG file ``path``.

    Parameters
    ----------
    result : SweepResult
    path : path
        The PNG file.
    unit : str, optional
        Energy unit of the axis (default: the sweep's own).
    thresholds : dict of label to ThresholdResult or float, optional
        Exact critical values to mark (one-parameter sweeps).
    title : str, optional

    Raises
    ------
    InputError
        A sweep of more than two parameters, or nothing computed.
    """
    unit = unit or result.energy_unit
    factor = result.unit_factor(unit)
    if result.points_done == 0:
        raise InputError("nothing to plot: no sweep point was computed")
    if len(result.parameters) == 1:
        _plot_line(result, path, unit, factor, thresholds or {}, title)
    elif len(result.parameters) == 2:
        _plot_maps(result, path, unit, factor, title)
    else:
        raise InputError(f"the plot shows sweeps of one or two parameters; this one varies "
                         f"{len(result.parameters)} ({', '.join(result.parameters)})")


def _default_title(result) -> str:
    fixed = ", ".join(f"{k} = {v:.6g}" if isinstance(v, float) else f"{k} = {v}"
                      for k, v in result.fixed.items())
    return f"{result.potential}" + (f" ({fixed})" if fixed else "") + \
        (f", reduced mass {result.mass:.6g}" if result.mass != 1.0 else "")


def _plot_line(result, path, unit, factor, thresholds, title) -> None:
    from matplotlib.lines import Line2D

    key = result.parameters[0]
    p_unit = result.parameter_units.get(key, "")
    labels = result.labels()
    colors = _colors(len(labels))
    fig, axes = _figure(10.0, 8.6, 3, 1, sharex=True,
                        gridspec_kw={"height_ratios": [3.0, 2.2, 0.35 + 0.18 * len(labels)]})
    ax, bax, strip = axes[0, 0], axes[1, 0], axes[2, 0]
    x_all = result.axes[key]
    v_inf = result.v_infinity[result.done] / factor
    finite_vinf = np.isfinite(v_inf)
    if finite_vinf.any():
        ax.plot(x_all[result.done][finite_vinf], v_inf[finite_vinf], ls="--", color="black", lw=1.0,
                label="continuum threshold V(\u221e)")
    crossing_drawn = False
    unresolved_drawn = False
    any_binding = False
    for j, label in enumerate(labels):
        track = result.level(label)
        x = track.values[key]
        order = np.argsort(x)
        x, e, bound, conv = x[order], track.energy[order] / factor, track.bound[order], track.converged[order]
        vi = track.v_infinity[order] / factor
        # Without an energy but not proven unbound: neither "not bound" nor a crossing.
        unresolved = ~bound & (result.grid(label, "status")[track.points][order] != "unbound")
        ax.plot(x, np.where(bound, e, np.nan), color=colors[j], lw=1.6, label=label)
        binding = np.where(bound & np.isfinite(vi), vi - e, np.nan)
        if np.any(binding > 0):
            bax.plot(x, np.where(binding > 0, binding, np.nan), color=colors[j], lw=1.4)
            any_binding = True
        bad = bound & ~conv
        if bad.any():
            ax.plot(x[bad], e[bad], ls="none", marker="o", mfc="none", color=colors[j], ms=6)
        # Where the level leaves (or enters) the spectrum between two sweep points.
        for i in np.nonzero((bound[1:] != bound[:-1]) & ~unresolved[1:] & ~unresolved[:-1])[0]:
            xm = math.sqrt(x[i] * x[i + 1]) if result.log_spaced.get(key) else 0.5 * (x[i] + x[i + 1])
            if math.isfinite(vi[i]):
                ax.plot([x[i], x[i + 1]], [vi[i], vi[i + 1]], color="0.45", lw=5, alpha=0.6,
                        solid_capstyle="butt")
                crossing_drawn = True
            exact = thresholds.get(label)
            strip.axvline(getattr(exact, "value", exact) if exact is not None else xm,
                          color=colors[j], lw=0.8, ls=":")
        row = len(labels) - 1 - j
        strip.plot(x, np.where(bound, row, np.nan), color=colors[j], lw=5, solid_capstyle="butt")
        strip.plot(x, np.where(bound | unresolved, np.nan, row), color="0.75", lw=1.2, ls=(0, (2, 2)))
        if unresolved.any():
            strip.plot(x[unresolved], np.full(np.count_nonzero(unresolved), row), ls="none", marker="x",
                       color="red", ms=6)
            unresolved_drawn = True
    marked = []
    for label, value in thresholds.items():
        p_c = getattr(value, "value", value)
        err = getattr(value, "error_estimate", None)
        color = colors[labels.index(label)] if label in labels else "0.3"
        for axis in (ax, bax):
            axis.axvline(p_c, color=color, lw=0.9, ls="-.")
        ax.annotate(label, (p_c, 1.0), xycoords=("data", "axes fraction"), xytext=(2, -2),
                    textcoords="offset points", va="top", ha="left", fontsize=8, color=color)
        marked.append(f"{label}: {p_c:.8g}" + (f" \u00b1 {err:.1g}" if err else ""))
    if result.log_spaced.get(key):
        ax.set_xscale("log")
    ax.set_ylabel(f"energy ({unit})")
    ax.set_title(title or _default_title(result), fontsize=10)
    ax.grid(alpha=0.3)
    handles, names = ax.get_legend_handles_labels()
    if crossing_drawn:
        handles.append(Line2D([], [], color="0.45", lw=5, alpha=0.6))
        names.append("leaves the spectrum in this interval")
    if marked:
        handles.append(Line2D([], [], color="0.3", lw=0.9, ls="-."))
        names.append("critical value (threshold)")
    ax.legend(handles, names, fontsize=8, loc="upper left", bbox_to_anchor=(1.01, 1.0),
              borderaxespad=0.0)
    if marked:
        ax.text(0.01, 0.02, f"critical {key}" + (f" ({p_unit})" if p_unit else "") + ":\n"
                + "\n".join(marked), transform=ax.transAxes, fontsize=7, va="bottom", ha="left",
                bbox=dict(boxstyle="round", facecolor="white", edgecolor="0.8", alpha=0.9))
    bax.set_yscale("log")
    bax.set_ylabel(f"V(\u221e) \u2212 E ({unit})", fontsize=9)
    bax.grid(alpha=0.3, which="both")
    bax.set_title("binding energy, log scale: s levels leave the threshold quadratically, "
                  "l \u2265 1 levels linearly", fontsize=8, loc="left")
    if not any_binding:
        bax.set_visible(False)
    strip.set_yticks(range(len(labels)), labels[::-1], fontsize=7)
    strip.set_ylim(-0.7, len(labels) - 0.3)
    strip.set_xlabel(_axis_label(key, p_unit))
    strip.set_title("bound (solid) and not bound (dashed) at each sweep point"
                    + ("; red \u00d7: not resolved, not proven unbound" if unresolved_drawn else ""),
                    fontsize=8, loc="left")
    strip.tick_params(axis="y", length=0)
    if not result.complete:
        ax.text(0.5, 0.5, f"INCOMPLETE: {result.points_done} of {result.points_total} points",
                transform=ax.transAxes, color="red", fontsize=10, ha="center")
    elif result.unresolved:
        ax.text(0.5, 0.5, f"INCOMPLETE: {result.unresolved} level(s) not resolved at some points",
                transform=ax.transAxes, color="red", fontsize=10, ha="center")
    _save(fig, path)


def _plot_maps(result, path, unit, factor, title) -> None:
    kx, ky = result.parameters[1], result.parameters[0]
    labels = result.labels()[:_MAX_MAPS]
    n = len(labels)
    cols = min(n, 3)
    rows = int(math.ceil(n / cols))
    fig, axes = _figure(4.2 * cols, 3.6 * rows, rows, cols)
    x, y = result.axes[kx], result.axes[ky]
    for j, label in enumerate(labels):
        ax = axes[j // cols, j % cols]
        energy = result.grid(label, "energy") / factor  # shape (len(y), len(x))
        bound = result.grid(label, "bound")
        masked = np.ma.masked_invalid(energy)
        from matplotlib import colormaps

        cmap = colormaps["viridis"].with_extremes(bad="0.85")
        mesh = ax.pcolormesh(x, y, masked, cmap=cmap, shading="nearest")
        fig.colorbar(mesh, ax=ax, label=f"energy ({unit})")
        if bound.any() and not bound.all() and len(x) > 1 and len(y) > 1:
            ax.contour(x, y, bound.astype(float), levels=[0.5], colors="red", linewidths=1.2)
        if result.log_spaced.get(kx):
            ax.set_xscale("log")
        if result.log_spaced.get(ky):
            ax.set_yscale("log")
        ax.set_title(f"{label}  (grey: not bound; red: threshold)", fontsize=9)
        ax.set_xlabel(_axis_label(kx, result.parameter_units.get(kx, "")))
        ax.set_ylabel(_axis_label(ky, result.parameter_units.get(ky, "")))
    for j in range(n, rows * cols):
        axes[j // cols, j % cols].set_visible(False)
    fig.suptitle(title or _default_title(result), fontsize=10)
    _save(fig, path)


def plot_fit(result, path, unit: str | None = None, title: str | None = None) -> None:
    """Draw a :class:`radsolve.analysis.fitting.FitResult`: levels and residuals, to the PNG ``path``.

    ``unit`` is the energy unit of the axis (default: the potential's own).
    """
    from radsolve.units import energy_unit_factor

    unit = unit or result.energy_unit
    factor = energy_unit_factor(unit)
    res = result.residuals
    fig, axes = _figure(7.5, 6.0, 2, 1, gridspec_kw={"height_ratios": [3.0, 1.6]})
    ax, rax = axes[0, 0], axes[1, 0]
    names = [r.label for r in res] + [f"{lab}*" for lab, _ in result.spurious]
    xs = np.arange(len(names))
    targets = np.array([r.target for r in res]) / factor
    sigma = np.array([r.uncertainty for r in res]) / factor
    computed = np.array([r.computed if r.bound else np.nan for r in res]) / factor
    width = 0.36
    for i in range(len(res)):
        ax.hlines(targets[i], xs[i] - width, xs[i], color="black", lw=2.0,
                  label="target" if i == 0 else None)
        ax.errorbar(xs[i] - width / 2, targets[i], yerr=sigma[i], color="black", capsize=3, lw=1)
        if np.isfinite(computed[i]):
            ax.hlines(computed[i], xs[i], xs[i] + width, color="tab:red", lw=2.0,
                      label="fitted potential" if i == 0 else None)
        else:
            ax.text(xs[i] + width / 2, targets[i], "not\nbound", color="tab:red", fontsize=7,
                    ha="center", va="bottom")
    for j, (lab, energy) in enumerate(result.spurious):
        i = len(res) + j
        ax.hlines(energy / factor, xs[i], xs[i] + width, color="tab:orange", lw=2.0,
                  label="bound, not a target (possible spurious)" if j == 0 else None)
    ax.set_xticks(xs, names)
    ax.set_ylabel(f"energy ({unit})")
    ax.grid(axis="y", alpha=0.3)
    ax.legend(fontsize=8, loc="center right")
    values = ", ".join(f"{k} = {result.values[k]:.6g} \u00b1 {result.standard_errors[k]:.2g}"
                       for k in result.free)
    chi = "n/a" if result.dof == 0 else f"{result.chi2_per_dof:.3g}"
    ax.set_title(title or f"fit of {result.potential}: {values}; \u03c7\u00b2/dof = {chi}", fontsize=9)

    resid = np.array([r.residual for r in res])
    rax.axhspan(-1, 1, color="0.9", label="\u00b11 uncertainty")
    rax.axhline(0, color="black", lw=0.8)
    colors = ["tab:red" if abs(v) > 3 else "tab:blue" for v in np.nan_to_num(resid)]
    rax.bar(np.arange(len(res)), np.nan_to_num(resid), color=colors, width=0.5)
    rax.set_xticks(np.arange(len(res)), [r.label for r in res])
    rax.set_xlim(ax.get_xlim())
    rax.set_ylabel("(computed \u2212 target) / uncertainty", fontsize=8)
    rax.grid(axis="y", alpha=0.3)
    lim = max(1.5, float(np.nanmax(np.abs(resid))) * 1.2 if np.isfinite(resid).any() else 1.5)
    rax.set_ylim(-lim, lim)
    rax.legend(fontsize=7, loc="upper right")
    _save(fig, path)
