"""radsolve: bound states of the radial Schrödinger equation in central potentials.

The public API (imported on first use, so that the command line starts fast):

- :func:`potential` — a potential family bound to parameter values;
- :func:`solve` — the bound levels, with error estimates (``method="fd" | "numerov" | "both"``);
- :func:`check` — the convergence reporter against exact hydrogen-like levels;
- :func:`families` — the potential families found (built-in and plug-ins);
- :func:`sweep` — the levels over a grid of parameter values (serial, worker
  processes or a Dask cluster);
- :func:`threshold`, :func:`critical_values` — the parameter value at which a
  level (or every level up to some n) reaches the continuum, with an error estimate;
- :func:`fit` — parameters fitted to target levels, with standard errors;
- :func:`state` — one level as a :class:`State`: ⟨r^k⟩, ⟨V⟩, ⟨T⟩, P(r < R),
  turning points, contact density, virial and Hellmann–Feynman checks, each
  with an error estimate (:func:`expectation` for any observable);
- :func:`wavefunction` — u(r) and R(r) on the grid or at given radii, with
  CSV / JSON / ``.npz`` export;
- :func:`phase_shifts`, :func:`scattering` — above the threshold: phase shifts
  delta_l(E) with error estimates, scattering lengths, effective ranges and the
  Levinson check; :func:`photoionization` — bound-free cross sections;
  :func:`log_derivatives` — u'/u at a radius, a model beside a reference, ghost states;
  :func:`resonances` — positions and widths from the phase shift and from the pole;
  :func:`continuum_wave` — u_E(r) normalized per unit energy;
- :func:`transitions` — E1 lines, oscillator strengths, Einstein A
  coefficients, lifetimes and branching ratios of the levels with n <= nmax.

All quantities are in atomic units (hartree, bohr, electron masses) unless a
function says otherwise.
"""

from importlib import import_module

__version__ = "0.1.0"

_EXPORTS = {
    "potential": ("radsolve.potentials", "potential"),
    "families": ("radsolve.potentials", "families"),
    "discover": ("radsolve.potentials", "discover"),
    "Parameter": ("radsolve.potentials", "Parameter"),
    "solve": ("radsolve.core.spectrum", "solve"),
    "check": ("radsolve.analysis.convergence", "check"),
    "SolveResult": ("radsolve.core.result", "SolveResult"),
    "Level": ("radsolve.core.result", "Level"),
    "RadsolveError": ("radsolve.errors", "RadsolveError"),
    "formula_potential": ("radsolve.potentials.formula", "formula_potential"),
    "tabulated_potential": ("radsolve.potentials.tabulated", "tabulated_potential"),
    "make_family": ("radsolve.potentials", "make_family"),
    "sweep": ("radsolve.analysis.sweeps", "sweep"),
    "threshold": ("radsolve.analysis.thresholds", "threshold"),
    "critical_values": ("radsolve.analysis.thresholds", "critical_values"),
    "fit": ("radsolve.analysis.fitting", "fit"),
    "state": ("radsolve.analysis.observables", "state"),
    "State": ("radsolve.analysis.observables", "State"),
    "Estimate": ("radsolve.analysis.observables", "Estimate"),
    "expectation": ("radsolve.analysis.observables", "expectation"),
    "wavefunction": ("radsolve.core.wavefunctions", "wavefunction"),
    "Wavefunction": ("radsolve.core.wavefunctions", "Wavefunction"),
    "transitions": ("radsolve.analysis.radiative", "transitions"),
    "transitions_from": ("radsolve.analysis.radiative", "transitions_from"),
    "radial_dipole": ("radsolve.analysis.radiative", "radial_dipole"),
    "TransitionResult": ("radsolve.analysis.radiative", "TransitionResult"),
    # above the threshold (continuum)
    "phase_shifts": ("radsolve.analysis.scattering", "phase_shifts"),
    "scattering": ("radsolve.analysis.scattering", "scattering"),
    "energy_grid": ("radsolve.analysis.scattering", "energy_grid"),
    "photoionization": ("radsolve.analysis.scattering", "photoionization"),
    "continuum_strength": ("radsolve.analysis.scattering", "continuum_strength"),
    "log_derivatives": ("radsolve.analysis.scattering", "log_derivatives"),
    "resonances": ("radsolve.analysis.scattering", "resonances"),
    "scattering_sweep": ("radsolve.analysis.scattering", "scattering_sweep"),
    "continuum_wave": ("radsolve.analysis.scattering", "continuum_wave"),
    "ContinuumWave": ("radsolve.analysis.scattering", "ContinuumWave"),
    "ScatteringSweepResult": ("radsolve.analysis.scattering", "ScatteringSweepResult"),
    "ResonanceResult": ("radsolve.analysis.scattering", "ResonanceResult"),
    "LogDerivativeResult": ("radsolve.analysis.scattering", "LogDerivativeResult"),
    "PhotoionizationResult": ("radsolve.analysis.scattering", "PhotoionizationResult"),
    "PhaseShiftResult": ("radsolve.analysis.scattering", "PhaseShiftResult"),
    "ScatteringResult": ("radsolve.analysis.scattering", "ScatteringResult"),
    # every result type, and the protocol they share
    "ResultProtocol": ("radsolve.core.protocol", "ResultProtocol"),
    "Outcome": ("radsolve.core.protocol", "Outcome"),
    "Note": ("radsolve.core.protocol", "Note"),
    "StateSummary": ("radsolve.analysis.observables", "StateSummary"),
    "SweepResult": ("radsolve.analysis.sweeps", "SweepResult"),
    "ThresholdResult": ("radsolve.analysis.thresholds", "ThresholdResult"),
    "CriticalValues": ("radsolve.analysis.thresholds", "CriticalValues"),
    "FitResult": ("radsolve.analysis.fitting", "FitResult"),
    "CheckReport": ("radsolve.analysis.convergence", "CheckReport"),
    # relativistic levels (issue 11)
    "DiracStateSummary": ("radsolve.analysis.relativistic", "DiracStateSummary"),
    "dirac_state": ("radsolve.analysis.relativistic", "dirac_state"),
    "relativistic_state": ("radsolve.analysis.relativistic", "relativistic_state"),
    # potentials and methods
    "Potential": ("radsolve.potentials", "Potential"),
    "RadialSolver": ("radsolve.core.solvers", "RadialSolver"),
    "METHODS": ("radsolve.core.solvers", "METHODS"),
    # errors
    "InputError": ("radsolve.errors", "InputError"),
    "PluginError": ("radsolve.errors", "PluginError"),
    "UnboundedBelowError": ("radsolve.errors", "UnboundedBelowError"),
    "NoThresholdError": ("radsolve.analysis.thresholds", "NoThresholdError"),
    "SweepPointFailed": ("radsolve.analysis.sweeps", "SweepPointFailed"),
    # plots (matplotlib is imported when one is drawn)
    "plot_wavefunction": ("radsolve.output.plotting", "plot_wavefunction"),
    "plot_level_diagram": ("radsolve.output.plotting", "plot_level_diagram"),
    "plot_sweep": ("radsolve.output.sweep_plotting", "plot_sweep"),
    "plot_fit": ("radsolve.output.sweep_plotting", "plot_fit"),
}

__all__ = sorted(_EXPORTS)


def __getattr__(name):
    try:
        module_name, attr = _EXPORTS[name]
    except KeyError:
        raise AttributeError(f"module 'radsolve' has no attribute {name!r}") from None
    return getattr(import_module(module_name), attr)


def __dir__():
    return sorted(list(globals()) + __all__)
