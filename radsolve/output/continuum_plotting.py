"""Pictures of phase shifts (PNG, SVG or PDF through matplotlib's Agg renderer; no pyplot).

:func:`plot_photoionization` draws sigma(omega) in Mb (length form, per final l,
and the velocity form dashed).  :func:`plot_log_derivatives` draws arctan(r_c L)
of a model and its reference with ghost states shaded.  :func:`plot_phase_shifts` draws delta_l(E) / pi of a
:class:`radsolve.analysis.scattering.PhaseShiftResult` (read through its
attributes: this layer does not import the analysis layer), one curve per l,
with the phase shifts that did not converge marked by crosses, and dotted
lines at the whole multiples of pi that Levinson's theorem ties to the bound
levels.
"""

from __future__ import annotations

import math

import numpy as np

from radsolve.output.sweep_plotting import _colors, _figure, _save


def _energies_in(result, unit: str | None):
    """(unit, factor, the result's energies in it): the unit system's own energy unit by default;
    an energy of the result divided by ``factor`` is in ``unit``."""
    from radsolve.units import stored_energy_factor, stored_energy_unit

    factor = stored_energy_factor(result.units, unit)
    return stored_energy_unit(result.units, unit), factor, np.asarray(result.energies) / factor


def plot_phase_shifts(result, path, unit: str | None = None, title: str | None = None) -> None:
    """delta_l(E)/pi against E for every l of ``result``, written to ``path``."""
    unit, factor, e = _energies_in(result, unit)
    fig, axes = _figure(7.0, 4.2)
    ax = axes[0][0]
    colors = _colors(len(result.ls))
    lo, hi = 0.0, 0.0
    for i, l in enumerate(result.ls):
        y = np.asarray(result.phase[i]) / math.pi
        js = getattr(result, "js", None)
        label = f"l = {l}" if js is None else f"l = {l}, j = {js[i]:g}"
        ax.plot(e, y, color=colors[i], lw=1.4, label=label)
        bad = ~np.asarray(result.converged[i])
        if bad.any():
            ax.plot(e[bad], y[bad], "x", color=colors[i], ms=5)
        finite = y[np.isfinite(y)]
        if finite.size:
            lo, hi = min(lo, float(finite.min())), max(hi, float(finite.max()))
    for m in range(math.floor(lo), math.ceil(hi) + 1):
        ax.axhline(m, color="0.6", lw=0.6, ls=":")
    ax.set_xlabel(f"E ({unit})")
    what = "phase shift relative to Coulomb waves" if result.tail == "coulomb" else "phase shift"
    ax.set_ylabel(f"{what} / pi")
    if any(not np.all(c) for c in result.converged):
        ax.plot([], [], "x", color="0.3", label="not converged")
    ax.legend(loc="best", fontsize=8)
    params = " ".join(f"{k}={v:.6g}" if isinstance(v, float) else f"{k}={v}" for k, v in result.parameters.items())
    import textwrap

    ax.set_title(title or "\n".join(textwrap.wrap(f"{result.potential} {params}".strip(), 100)), fontsize=9)
    _save(fig, path)


def plot_photoionization(result, path, unit: str | None = None, title: str | None = None) -> None:
    """sigma(omega) of a :class:`radsolve.analysis.scattering.PhotoionizationResult` (Mb, log scale)."""
    import textwrap

    from radsolve.units import energy_unit_factor

    unit = unit or "hartree"
    w = np.asarray(result.photon_energies) / energy_unit_factor(unit)
    fig, axes = _figure(7.0, 4.2)
    ax = axes[0][0]
    colors = _colors(len(result.final_ls) + 2)
    ax.plot(w, np.asarray(result.sigma) / 1e-18, color=colors[0], lw=1.8, label="total (length form)")
    ax.plot(w, np.asarray(result.sigma_velocity) / 1e-18, color="0.2", lw=0.9, ls="--", label="total (velocity form)")
    for i, lf in enumerate(result.final_ls):
        ax.plot(w, np.asarray(result.sigma_l[i]) / 1e-18, color=colors[i + 1], lw=1.0, label=f"to l = {lf}")
    bad = ~np.asarray(result.converged)
    if bad.any():
        ax.plot(w[bad], np.asarray(result.sigma)[bad] / 1e-18, "x", color="0.3", label="not converged")
    ax.set_yscale("log")
    ax.set_xlabel(f"photon energy ({unit})")
    ax.set_ylabel("cross section (Mb)")
    ax.legend(loc="best", fontsize=8)
    params = " ".join(f"{k}={v:.6g}" if isinstance(v, float) else f"{k}={v}" for k, v in result.parameters.items())
    ax.set_title(title or "\n".join(textwrap.wrap(f"{result.level} of {result.potential} {params}".strip(), 100)),
                 fontsize=9)
    _save(fig, path)


def plot_log_derivatives(result, path, unit: str | None = None, title: str | None = None) -> None:
    """arctan(r_c L_l(E)) of a :class:`radsolve.analysis.scattering.LogDerivativeResult`, model and reference.

    arctan keeps the poles of L finite (they become jumps of pi); ghost and
    missing states are shaded between the energies that bracket them.
    """
    import textwrap

    unit, factor, e = _energies_in(result, unit)
    fig, axes = _figure(7.0, 4.2)
    ax = axes[0][0]
    colors = _colors(len(result.ls))
    def broken(values):
        # a pole of L is a jump of arctan from -pi/2 to pi/2: no line across it
        y = np.arctan(result.radius * np.asarray(values, dtype=float))
        y[1:][np.diff(y) > 0.5 * math.pi] = np.nan
        return y

    for i, l in enumerate(result.ls):
        ax.plot(e, broken(result.model[i]), color=colors[i], lw=1.6, label=f"l = {l} {result.potential}")
        if result.ref is not None:
            ax.plot(e, broken(result.ref[i]), color=colors[i], lw=1.0, ls="--",
                    label=f"l = {l} {result.reference} (reference)")
    for l, lo, hi, kind in result.ghosts:
        ax.axvspan(lo / factor, hi / factor, color="tab:red" if kind == "ghost" else "tab:orange", alpha=0.25)
        ax.text(0.5 * (lo + hi) / factor, 1.45, f"{kind} l={l}", ha="center", fontsize=7, color="tab:red")
    ax.set_ylim(-1.65, 1.65)
    ax.set_xlabel(f"E ({unit})")
    length = "bohr" if result.units == "atomic" else "fm"
    ax.set_ylabel(f"arctan(r_c u'/u), r_c = {result.radius:.4g} {length}")
    ax.legend(loc="lower left", fontsize=7)
    params = " ".join(f"{k}={v:.6g}" if isinstance(v, float) else f"{k}={v}" for k, v in result.parameters.items())
    ax.set_title(title or "\n".join(textwrap.wrap(f"logarithmic derivative: {result.potential} {params}".strip(), 100)),
                 fontsize=9)
    _save(fig, path)
