"""Plots of computed states: wavefunctions over their potential, and level diagrams with E1 lines.

matplotlib is imported only inside the functions that draw, and only its
object-oriented, backend-free parts (``matplotlib.figure.Figure``, saved
through the Agg/SVG/PDF writers by file extension), so plotting works
headless and never switches the backend of an interactive session.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from radsolve.errors import InputError

#: File types the plots can be written as.
PLOT_FORMATS = (".png", ".svg", ".pdf")


def check_plot_path(path) -> Path:
    """``path`` as a Path if its extension is a plot format and its folder exists.

    Raises
    ------
    InputError
        Naming the path and what is allowed.
    """
    path = Path(path)
    if path.suffix.lower() not in PLOT_FORMATS:
        raise InputError(f"plot file {str(path)!r}: unknown type {path.suffix or '(no extension)'!r}; "
                         f"allowed: {', '.join(PLOT_FORMATS)}")
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(f"plot file {str(path)!r}: folder {str(folder)!r} does not exist")
    return path


def _figure(width: float, height: float):
    from matplotlib.figure import Figure

    return Figure(figsize=(width, height), dpi=110, layout="constrained")


def _save(fig, path: Path) -> Path:
    try:
        fig.savefig(path)
    except OSError as exc:
        raise InputError(f"plot file {str(path)!r}: cannot write: {exc.strerror}") from None
    return path


def _unit_factor(unit: str) -> float:
    from radsolve.units import energy_unit_factor

    return energy_unit_factor(unit)


def _params_text(potential) -> str:
    params = dict(potential.parameters)
    parts = []
    for key, value in params.items():
        parts.append(f"{key} = {value:.6g}" if isinstance(value, (int, float)) else f"{key} = {value}")
    return ", ".join(parts)


def plot_relativistic_wave(summary, path) -> Path:
    """Draw a Dirac level's G(r) and F(r) (or a Klein-Gordon level's u(r)) against r on a log axis.

    A log radius axis because F of a light ion is (Z alpha)/2 of G and lives at the same radii, while
    both start as r^gamma far inside the Bohr radius; the lower panel shows the density (G^2 + F^2 or
    rho u^2) and the share below each r.
    """
    path = check_plot_path(path)
    wave = summary.wavefunction()
    r = wave.r
    length = "bohr" if summary.units == "atomic" else "fm"
    if wave.equation == "dirac":
        density = wave.columns["G"] ** 2 + wave.columns["F"] ** 2
        curves = (("G", "large component G", "tab:blue"), ("F", "small component F", "tab:red"))
    else:
        density = wave.columns["rho"] * wave.columns["u"] ** 2
        curves = (("u", "u (charge-density normalization)", "tab:blue"),)
    share = np.concatenate([[0.0], np.cumsum(0.5 * (density[1:] + density[:-1]) * np.diff(r))])
    share /= share[-1] if share[-1] > 0 else 1.0
    keep = (share < 1.0 - 1e-7) | (np.arange(r.size) == 0)
    last = min(int(np.nonzero(keep)[0][-1]) + 2, r.size)
    r, density, share = r[:last], density[:last], share[:last]
    fig = _figure(7.2, 6.0)
    top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=(3, 2))
    for key, name, color in curves:
        top.plot(r, wave.columns[key][:last], color=color, lw=1.4, label=name)
    top.axhline(0.0, color="0.6", lw=0.7)
    top.set_xscale("log")
    top.set_ylabel(f"component / {length}$^{{-1/2}}$")
    top.legend(fontsize=8, loc="upper left")
    unit = "hartree" if summary.units == "atomic" else "MeV"
    top.set_title(f"{summary.equation} level {summary.label} of {summary.potential.name}"
                  + (f" ({_params_text(summary.potential)})" if summary.potential.parameters else "")
                  + f"\nE − mc² = {wave.energy:.10g} {unit}", fontsize=10)
    bottom.plot(r, density, color="black", lw=1.2, label="density per unit r")
    bottom.set_ylabel(f"density / {length}$^{{-1}}$")
    bottom.set_xlabel(f"r / {length}  (log scale)")
    twin = bottom.twinx()
    twin.plot(r, share, color="tab:green", lw=1.0, ls="--", label="P(r′ < r)")
    twin.set_ylim(0.0, 1.05)
    twin.set_ylabel("P(r′ < r)", color="tab:green")
    bottom.legend(fontsize=8, loc="upper left")
    return _save(fig, path)


def _spread_labels(targets: np.ndarray, gap: float, low: float, high: float) -> np.ndarray:
    """Label heights near ``targets`` (sorted), at least ``gap`` apart, within [low, high].

    The least-squares placement (pool-adjacent-violators on targets - i*gap),
    then clipped into the window.  Returns positions in the targets' order.
    """
    n = targets.size
    if n == 0:
        return targets
    shifted = targets - gap * np.arange(n)
    # isotonic (non-decreasing) least-squares fit by pool-adjacent-violators
    blocks: list[list[float]] = []
    for value in shifted:
        blocks.append([value, 1.0])
        while len(blocks) > 1 and blocks[-2][0] > blocks[-1][0]:
            v2, w2 = blocks.pop()
            v1, w1 = blocks.pop()
            blocks.append([(v1 * w1 + v2 * w2) / (w1 + w2), w1 + w2])
    fitted = np.concatenate([[v] * int(w) for v, w in blocks])
    positions = fitted + gap * np.arange(n)
    if positions[-1] > high:
        positions -= positions[-1] - high
    if positions[0] < low:
        positions += low - positions[0]
    return positions


# ---------------------------------------------------------------- wavefunction


def plot_wavefunction(state, path, unit: str = "hartree", r_max: float | None = None) -> Path:
    """Draw u(r) of a state on the axes of its potential, with the level energy.

    The energy axis (left, in ``unit``) carries V(r), the effective potential
    V + l(l+1)/(2μr²) for l > 0, the level energy E and the classical turning
    points; u(r) is drawn with its zero line at E, and its own scale
    (bohr**-1/2) is on the right-hand axis.

    Parameters
    ----------
    state : radsolve.State
    path : str or Path
        ``.png``, ``.svg`` or ``.pdf``.
    unit : str
        Energy unit of the left axis.
    r_max : float, optional
        Right end of the radius axis, bohr (default: where 99.99 % of the
        probability lies inside, and beyond the outer turning point).
    """
    path = check_plot_path(path)
    factor = _unit_factor(unit)
    wave = state.wavefunction()
    r, u = wave.r, wave.u
    energy = state.level.energy
    turning = [t.value for t in state.turning_points()]
    if r_max is None:
        cumulative = np.cumsum(wave.weights * u**2)
        inside = r[np.searchsorted(cumulative, 1.0 - 1e-4 * cumulative[-1])] if cumulative[-1] > 0 else r[-1]
        r_max = max(inside, 1.15 * max(turning, default=0.0))
        r_max = min(r_max, r[-1])
    keep = (r > 0) & (r <= r_max)
    r, u = r[keep], u[keep]
    # a uniform radius grid for smooth curves of V
    rr = np.linspace(r_max / 2000.0, r_max, 2000)
    v = state.channel(rr) / factor
    l, mu = state.l, state.mass
    v_eff = v + l * (l + 1) / (2.0 * mu * rr**2) / factor
    e = energy / factor
    v_inf = state.profile.v_infinity / factor

    # Energy window: the level, its binding scale, and the bottom of the well.
    scale = abs(e - v_inf) if math.isfinite(v_inf) else max(abs(e - np.min(v)), 1e-300)
    scale = max(scale, 1e-12 * max(abs(e), 1e-300))
    amplitude = 0.45 * scale
    low = max(min(np.min(v_eff), np.min(v)), e - 2.2 * scale)
    low = min(low, e - 1.2 * amplitude)
    high = v_inf + 0.35 * scale if math.isfinite(v_inf) else e + 1.3 * scale
    high = max(high, e + 1.25 * amplitude)
    # show a centrifugal barrier above the threshold when it is not too tall
    high = max(high, min(float(np.max(v_eff[rr > min(turning, default=0.0)])) + 0.1 * scale,
                         e + 4.0 * scale))

    fig = _figure(7.2, 4.6)
    ax = fig.add_subplot()
    peak = float(np.max(np.abs(u)))
    ax.axhline(e, color="tab:red", lw=1.0, ls="-", zorder=1, label=f"E = {e:.10g} {unit}")
    ax.plot(rr, v, color="black", lw=1.4, label="V(r)", zorder=2)
    if l > 0 or not np.allclose(v_eff, v):
        ax.plot(rr, v_eff, color="0.45", lw=1.1, ls="--",
                label="V(r) + l(l+1)/(2\u03bcr\u00b2)", zorder=2)
    ax.plot(r, e + amplitude * u / peak, color="tab:blue", lw=1.6,
            label="u(r), zero line at E (scale on the right)", zorder=3)
    for t in turning:
        if t <= r_max:
            ax.plot([t], [e], marker="o", ms=4, color="tab:red", zorder=4,
                    label="classical turning point" if t == turning[0] else None)
    if math.isfinite(v_inf) and low < v_inf < high:
        ax.axhline(v_inf, color="0.7", lw=0.8, ls=":", zorder=0)
    ax.set_xlim(0.0, r_max)
    ax.set_ylim(low, high)
    ax.set_xlabel("r / bohr")
    ax.set_ylabel(f"energy / {unit}")
    secondary = ax.secondary_yaxis(
        "right", functions=(lambda y: (y - e) * peak / amplitude, lambda w: e + w * amplitude / peak))
    secondary.set_ylabel("u(r) / bohr$^{-1/2}$")
    params = _params_text(state.potential)
    ax.set_title(f"{state.label} level of {state.potential.name}"
                 + (f" ({params})" if params else "")
                 + f", \u03bc = {state.mass:.6g} m$_e$", fontsize=10)
    ax.legend(loc="best", fontsize=8, framealpha=0.9)
    return _save(fig, path)


# ---------------------------------------------------------------- level diagram


def plot_level_diagram(transitions, path, unit: str = "hartree", scale: str = "auto") -> Path:
    """Level diagram: one column per l, a bar per level, the E1 lines between them.

    Line width and shade grow with log10 of the Einstein A coefficient (the
    colour bar gives A in s^-1).  Metastable levels (no E1 decay) are drawn
    in orange, the ground level in black.  Each label sits on its bar (the
    lines attach at the bar ends); where levels crowd too densely to label
    them all, the unlabelled ones are named as a range above the crowd.

    Parameters
    ----------
    transitions : radsolve.analysis.radiative.TransitionResult
    path : str or Path
        ``.png``, ``.svg`` or ``.pdf``.
    unit : str
        Energy unit of the vertical axis.
    scale : {"auto", "linear", "log"}
        ``"linear"``: energy; ``"log"``: binding energy V(inf) - E on a
        logarithmic axis, increasing downwards, which spreads out Rydberg-like
        series; ``"auto"``: log when every level is bound below a finite
        threshold and the binding energies span more than a factor 20.
    """
    from matplotlib import colormaps
    from matplotlib.cm import ScalarMappable
    from matplotlib.colors import Normalize
    from matplotlib.transforms import blended_transform_factory

    from radsolve.core.result import orbital_letter

    if scale not in ("auto", "linear", "log"):
        raise InputError(f"unknown level-diagram scale {scale!r}; allowed: auto, linear, log")
    path = check_plot_path(path)
    factor = _unit_factor(unit)
    states = transitions.states
    if not states:
        raise InputError("no levels to draw")
    energies = {s.label: s.energy / factor for s in states}
    v_inf = transitions.result.v_infinity / factor
    binding = {k: v_inf - e for k, e in energies.items()} if math.isfinite(v_inf) else {}
    can_log = bool(binding) and min(binding.values()) > 0
    if scale == "log" and not can_log:
        raise InputError("a log scale of binding energy needs every level below a finite threshold")
    use_log = can_log and (scale == "log" or (
        scale == "auto" and max(binding.values()) / min(binding.values()) > 20.0))
    y = binding if use_log else energies
    # one column per l, or per (l, j) for Dirac levels (the fine structure would stack their bars)
    with_j = any(getattr(s, "j", None) is not None for s in states)
    keys = sorted({(s.l, getattr(s, "j", None) or 0.0) for s in states})
    place = {key: (i if with_j else key[0]) for i, key in enumerate(keys)}
    col = {s.label: place[(s.l, getattr(s, "j", None) or 0.0)] for s in states}
    ls = sorted(set(col.values()))
    half = 0.32
    fig = _figure(min(max(6.5, 0.72 * len(ls) + 3.6), 12.0), 6.4)
    ax = fig.add_subplot()
    values = np.array(list(y.values()))
    if use_log:
        lo, hi = float(np.min(values)), float(np.max(values))
        pad = (hi / lo) ** 0.05
        ax.set_yscale("log")
        ax.set_ylim(hi * pad, lo / pad)  # inverted: weakly bound levels at the top
        from matplotlib.ticker import LogLocator, NullFormatter, StrMethodFormatter

        decades = math.log10(hi / lo)
        subs = (1.0, 2.0, 5.0) if decades < 4 else (1.0,)
        ax.yaxis.set_major_locator(LogLocator(base=10.0, subs=subs))
        ax.yaxis.set_major_formatter(StrMethodFormatter("{x:.3g}"))
        ax.yaxis.set_minor_locator(LogLocator(base=10.0, subs=np.arange(1.0, 10.0)))
        ax.yaxis.set_minor_formatter(NullFormatter())
    else:
        lo, hi = float(np.min(values)), float(np.max(values))
        span = max(hi - lo, 1e-300)
        top = hi + 0.07 * span
        if math.isfinite(v_inf) and v_inf >= hi:
            top = max(top, v_inf + 0.03 * span)
        ax.set_ylim(lo - 0.06 * span, top)
    ax.set_xlim(min(ls) - 0.6, max(ls) + 0.6)

    lines = transitions.lines
    cmap = colormaps["viridis_r"]
    by_label = {s.label: s for s in states}
    if lines:
        logs = np.log10([max(x.einstein_A, 1e-300) for x in lines])
        a_lo, a_hi = float(np.min(logs)), float(np.max(logs))
        if a_hi - a_lo < 1e-9:
            a_lo, a_hi = a_lo - 0.5, a_hi + 0.5
        norm = Normalize(a_lo, a_hi)
        for i in np.argsort(logs):  # strong lines drawn last, on top
            x = lines[i]
            up, down = by_label[x.upper], by_label[x.lower]
            weight = float(norm(logs[i]))
            xu = col[up.label] - half if col[down.label] < col[up.label] else col[up.label] + half
            xl = col[down.label] + half if col[down.label] < col[up.label] else col[down.label] - half
            ax.plot([xu, xl], [y[x.upper], y[x.lower]], color=cmap(0.15 + 0.85 * weight),
                    lw=0.3 + 2.7 * weight, alpha=0.35 + 0.65 * weight, zorder=2,
                    solid_capstyle="round")
        bar = fig.colorbar(ScalarMappable(norm=norm, cmap=cmap), ax=ax, pad=0.01, fraction=0.04)
        bar.set_label("log$_{10}$(A / s$^{-1}$)")
    for s in states:
        color = "black" if s.ground else ("tab:orange" if s.metastable else "tab:blue")
        ax.plot([col[s.label] - half, col[s.label] + half], [y[s.label]] * 2, color=color, lw=2.2,
                solid_capstyle="butt", zorder=3)
    if not use_log and math.isfinite(v_inf):
        ax.axhline(v_inf, color="0.6", lw=0.8, ls=":", zorder=1)
        ax.text(max(ls) + 0.55, v_inf, "threshold V(∞)", ha="right", va="bottom",
                fontsize=7, color="0.4")

    # Labels sit on their bars; positions in axes fraction so that the same
    # code serves linear and log axes.
    to_frac = lambda value: ax.transAxes.inverted().transform(ax.transData.transform((0.0, value)))[1]
    height_pt = fig.get_figheight() * 72.0 * 0.78
    fontsize = 7.5
    gap = 1.25 * fontsize / height_pt
    blend = blended_transform_factory(ax.transData, ax.transAxes)
    unlabelled_total = 0
    for l in ls:
        column = sorted((s for s in states if col[s.label] == l), key=lambda s: to_frac(y[s.label]))
        fracs = np.array([to_frac(y[s.label]) for s in column])
        kept: list[int] = []
        for i in range(len(column)):
            trial = _spread_labels(fracs[kept + [i]], gap, 0.0, 1.0)
            if np.all(np.abs(trial - fracs[kept + [i]]) <= 0.35 * gap):
                kept.append(i)
        positions = _spread_labels(fracs[kept], gap, 0.0, 1.0) if kept else []
        for i, f in zip(kept, positions):
            ax.text(l, f, column[i].label, transform=blend, fontsize=fontsize, ha="center",
                    va="center", zorder=5,
                    bbox=dict(boxstyle="square,pad=0.12", fc="white", ec="none", alpha=0.9))
        skipped = [i for i in range(len(column)) if i not in kept]
        unlabelled_total += len(skipped)
        if skipped:
            names = [column[i].label for i in skipped]
            text = names[0] if len(names) == 1 else f"{names[0]}–{names[-1]}"
            above = max(fracs[skipped]) + 0.9 * gap
            higher = [fracs[i] for i in kept if fracs[i] > max(fracs[skipped])]
            if above < 0.995 and (not higher or min(higher) - above >= gap):
                ax.text(l, above, text, transform=blend, fontsize=fontsize - 0.5, ha="center",
                        va="center", color="0.3", zorder=5)
                unlabelled_total -= len(skipped)
    if with_j:
        ax.set_xticks(ls, [f"{orbital_letter(l)}{int(round(2 * j))}/2" for l, j in keys])
        ax.set_xlabel("channel l j")
    else:
        ax.set_xticks(ls, [f"{l}\n{orbital_letter(l)}" for l in ls])
        ax.set_xlabel("orbital angular momentum l")
    if use_log:
        ax.set_ylabel(f"binding energy V(∞) − E / {unit}  (log scale)")
    else:
        ax.set_ylabel(f"energy / {unit}")
    params = _params_text(transitions.result.potential)
    ax.set_title(f"E1 lines of {transitions.result.potential.name}" + (f" ({params})" if params else "")
                 + f", n ≤ {transitions.nmax}, μ = {transitions.result.mass:.6g} m$_e$",
                 fontsize=10)
    handles = [ax.plot([], [], color=c, lw=2.2)[0] for c in ("black", "tab:orange", "tab:blue")]
    ax.legend(handles, ["ground level", "metastable (no E1 decay)", "decays by E1"],
              loc="lower right", fontsize=8, framealpha=0.9)
    if unlabelled_total:
        fig.text(0.01, 0.005, f"{unlabelled_total} crowded level(s) left unlabelled", fontsize=7,
                 color="0.35")
    return _save(fig, path)
