"""Wavefunctions of computed levels: grid numerics, interpolation and export.

A level's ``samples`` hold the normalized reduced radial function u(r) on each
grid of the refinement sequence (see :mod:`radsolve.core.result`).  This module

* recovers the mapping variable x of a sample's grid (the grids are uniform in
  x = ln r + r/s, :mod:`radsolve.core.grids`), so that u can be treated as a smooth
  function of x;
* replaces u below a small radius r_c by the power law C r**lambda that every
  bound state follows at the origin (lambda = l + 1 for potentials less
  singular than r**-2), matched at r_c.  There |u| is below 1e-6 of its
  maximum, the solver's absolute rounding noise would dominate u/r and
  u**2 r**k for negative k, and the power law is exact up to relative
  corrections of order r_c times the inverse length of the potential;
* interpolates u to any radius with a local polynomial of degree 7 in x,
  differentiates and integrates it to high order;
* extrapolates u point by point across the refinement sequence (Richardson,
  like the energies) and exports u and R = u/r as CSV, JSON or NumPy ``.npz``.

Sign convention: u > 0 as r -> 0 (on the first lobe), on every grid.
Units: r in bohr, u in bohr**-1/2, R in bohr**-3/2; normalization
integral of u**2 dr = 1 (so that the integral of |psi|**2 d^3r = 1 with
psi = R(r) Y_lm).
"""

from __future__ import annotations

import csv
import io
import json
import math
from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path
from typing import Any

import numpy as np

from radsolve.errors import InputError

#: Below the radius where |u| first reaches this fraction of max|u|, u is
#: replaced by its power law at the origin.
ORIGIN_FRACTION = 1e-6
#: Points of the local interpolating polynomial (degree STENCIL - 1).
STENCIL = 8
#: File formats of :meth:`Wavefunction.save`, by extension.
EXPORT_FORMATS = {".csv": "csv", ".json": "json", ".npz": "npz"}

SIGN_CONVENTION = "u(r) > 0 as r -> 0 (first lobe positive)"

# Eighth-order central first derivative (9 points), common practice
# (Fornberg's finite-difference weights).
_D1 = np.array([1 / 280, -4 / 105, 1 / 5, -4 / 5, 0.0, 4 / 5, -1 / 5, 4 / 105, -1 / 280])


# ---------------------------------------------------------------- local polynomials


@lru_cache(maxsize=None)
def _basis() -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Coefficients (ascending powers of t) of the Lagrange basis on nodes 0..STENCIL-1.

    Returns (value, first derivative, second derivative, antiderivative from 0)
    coefficient matrices, one row per basis polynomial.
    """
    P = np.polynomial.polynomial
    nodes = np.arange(STENCIL, dtype=float)
    rows = []
    for k in range(STENCIL):
        others = np.delete(nodes, k)
        coeffs = P.polyfromroots(others) / np.prod(nodes[k] - others)
        rows.append(coeffs)
    value = np.array(rows)
    d1 = np.array([np.append(P.polyder(c), 0.0) for c in value])
    d2 = np.array([np.append(P.polyder(c, 2), [0.0, 0.0]) for c in value])
    anti = np.array([P.polyint(c) for c in value])
    return value, d1, d2, anti


def _powers(t: np.ndarray, degree: int) -> np.ndarray:
    return t[:, None] ** np.arange(degree + 1)[None, :]


def _stencil_start(xi: np.ndarray, size: int) -> np.ndarray:
    """First node of the STENCIL-point stencil centred on fractional index ``xi``."""
    start = np.floor(xi).astype(int) - (STENCIL // 2 - 1)
    return np.clip(start, 0, size - STENCIL)


def _local(values: np.ndarray, xi: np.ndarray, which: int = 0) -> np.ndarray:
    """Interpolant (which=0), its first (1) or second (2) derivative in index units at ``xi``."""
    xi = np.atleast_1d(np.asarray(xi, dtype=float))
    start = _stencil_start(xi, values.size)
    t = xi - start
    coeffs = _basis()[which]
    weights = _powers(t, STENCIL - 1) @ coeffs.T  # (Q, STENCIL)
    idx = start[:, None] + np.arange(STENCIL)[None, :]
    return np.sum(weights * values[idx], axis=1)


@lru_cache(maxsize=None)
def _interval_weights() -> np.ndarray:
    """Weights of the integral over one step [3, 4] of the STENCIL-point interpolant."""
    anti = _basis()[3]
    lo = _powers(np.array([STENCIL // 2 - 1.0]), STENCIL)[0]
    hi = _powers(np.array([STENCIL // 2 + 0.0]), STENCIL)[0]
    return anti @ (hi - lo)


def _cumulative(g: np.ndarray) -> np.ndarray:
    """C[i] = integral of g over index units from 0 to i (STENCIL-point rule, zero padding)."""
    half = STENCIL // 2
    padded = np.concatenate([np.zeros(half - 1), g, np.zeros(half)])
    windows = np.lib.stride_tricks.sliding_window_view(padded, STENCIL)[: g.size - 1]
    steps = windows @ _interval_weights()
    return np.concatenate([[0.0], np.cumsum(steps)])


def _integral_upto(g: np.ndarray, xi: float) -> float:
    """Integral of g over index units from 0 to fractional index ``xi`` (0 <= xi <= size-1)."""
    size = g.size
    xi = min(max(float(xi), 0.0), size - 1.0)
    i = min(int(math.floor(xi)), size - 2)
    theta = xi - i
    half = STENCIL // 2
    padded = np.concatenate([np.zeros(half - 1), g, np.zeros(half)])
    window = padded[i : i + STENCIL]
    anti = _basis()[3]
    lo = _powers(np.array([half - 1.0]), STENCIL)[0]
    hi = _powers(np.array([half - 1.0 + theta]), STENCIL)[0]
    partial = float(window @ (anti @ (hi - lo)))
    return float(_cumulative(g)[i]) + partial


def derivative_x(u: np.ndarray, step: float, below: np.ndarray) -> np.ndarray:
    """du/dx on a uniform grid (eighth order), with ``below`` = u at the 4 points under x[0]."""
    padded = np.concatenate([below, u, np.zeros(4)])
    windows = np.lib.stride_tricks.sliding_window_view(padded, 9)
    return windows @ _D1 / step


# ---------------------------------------------------------------- one grid sample


@dataclass(frozen=True)
class SampleGrid:
    """A grid sample with its mapping recovered and u regularized at the origin.

    Attributes
    ----------
    sample : GridSample
        The solver's sample.
    x : ndarray
        Mapping variable at the points (uniform, step ``sample.step``).
    scale : float
        Crossover radius s of the mapping x = ln r + r/s, bohr (inf: pure log).
    u : ndarray
        u with the sign convention applied and the power law below ``r[j]``.
    j : int
        First index where |u| >= ORIGIN_FRACTION * max|u|.
    lam : float
        Origin exponent lambda of u ~ C r**lambda.
    coefficient : float
        C in u = C r**lambda (1 + a r**q) near the origin, bohr**(-1/2 - lambda).
    power_law_spread : float
        Estimated relative error of that two-term law at r[j] (the square of
        its correction term there, doubled), where it is largest.
    correction_power : float
        q (1 for a Coulomb-like V ~ 1/r, p + 2 for V ~ r**p, within [0.25, 1]).
    correction : float
        a, bohr**-q, from matching the law to u at r[j] and at the radius
        ``r[j2]`` where |u| reaches 100 times the fraction of r[j].
    j2 : int
    """

    sample: Any
    x: np.ndarray
    scale: float
    u: np.ndarray
    j: int
    lam: float
    coefficient: float
    power_law_spread: float
    correction_power: float = 1.0
    correction: float = 0.0
    j2: int = 0

    def origin_law(self, radius) -> np.ndarray:
        """C r**lambda (1 + a r**q) at radii near (or below) r[j]."""
        radius = np.asarray(radius, dtype=float)
        return self.coefficient * radius**self.lam * (1.0 + self.correction * radius**self.correction_power)

    @property
    def r(self) -> np.ndarray:
        return self.sample.r

    @property
    def weights(self) -> np.ndarray:
        return self.sample.weights

    @property
    def step(self) -> float:
        return self.sample.step

    @property
    def energy(self) -> float:
        return self.sample.energy

    @property
    def jacobian(self) -> np.ndarray:
        return self.sample.weights / self.sample.step

    def index_of(self, radius) -> np.ndarray:
        """Fractional index (x(radius) - x[0]) / step of radii inside the grid."""
        radius = np.asarray(radius, dtype=float)
        mapping = getattr(self.sample, "mapping", None)
        if mapping is not None:
            xr = mapping.xi_of_r(radius)
        else:
            xr = np.log(radius) + (radius / self.scale if math.isfinite(self.scale) else 0.0)
        return (xr - self.x[0]) / self.step

    def radius_of(self, index) -> np.ndarray:
        """Radius at fractional index (inverse of :meth:`index_of`)."""
        from radsolve.core.grids import radius_from_x

        x = self.x[0] + np.asarray(index, dtype=float) * self.step
        mapping = getattr(self.sample, "mapping", None)
        if mapping is not None:
            return mapping.r_of_xi(x)
        if not math.isfinite(self.scale):
            return np.exp(x)
        return radius_from_x(x, self.scale)

    def geometric_tail(self, first_term: float, beta: float) -> float:
        """Trapezoid sum below x[0] of an integrand growing like e**(beta x) whose
        term at x[0] (weight times value) is ``first_term``: the grid's sum
        continued to x = -inf on the power law."""
        q = math.exp(-beta * self.step)
        return first_term * q / (1.0 - q)

    def values_at(self, radius) -> np.ndarray:
        """u at arbitrary radii (bohr): interpolated in x, power law below the grid, 0 beyond it."""
        radius = np.atleast_1d(np.asarray(radius, dtype=float))
        out = np.zeros_like(radius)
        inside = (radius >= self.r[0]) & (radius <= self.r[-1])
        below = (radius > 0) & (radius < self.r[0])
        if inside.any():
            out[inside] = _local(self.u, self.index_of(radius[inside]))
        out[below] = self.origin_law(radius[below])
        return out


def _mapping_scale(sample) -> float:
    """The crossover radius s of x = ln r + r/s, recovered from r and the weights."""
    r, jac = sample.r, sample.weights / sample.step
    # jacobian dr/dx = r s / (r + s), so s = r jac / (r - jac); the outermost
    # point, where r/s is largest, gives it most accurately.
    gap = r[-1] - jac[-1]
    if gap <= 1e-10 * r[-1]:
        return math.inf
    return float(r[-1] * jac[-1] / gap)


def prepare(sample, lam: float, correction_power: float = 1.0) -> SampleGrid:
    """A :class:`SampleGrid` for one GridSample and origin exponent ``lam``.

    ``correction_power`` q: the relative correction to u ~ C r**lambda grows
    like r**q (q = 1 for a Coulomb-like V ~ r**-1, p + 2 for V ~ r**p); below
    r[j] u is replaced by C r**lambda (1 + a r**q) (see :func:`origin_fit`).
    """
    r = sample.r
    mapping = getattr(sample, "mapping", None)
    if mapping is not None:
        scale = mapping.scale
        x = mapping.xi_of_r(r)
    else:
        scale = _mapping_scale(sample)
        x = np.log(r) + (r / scale if math.isfinite(scale) else 0.0)
    steps = np.diff(x)
    if steps.size and np.max(np.abs(steps - sample.step)) > 1e-7 * max(sample.step, 1e-300) + 1e-9:
        bad = int(np.argmax(np.abs(steps - sample.step) > 1e-7 * sample.step + 1e-9))
        raise RuntimeError(
            "radsolve.core.wavefunctions: the solver's grid is not uniform in x = ln r + r/s beyond "
            f"r = {r[bad]:.6g} bohr (box {r[-1]:.6g} bohr, s = {scale:.6g} bohr); observables "
            "cannot be computed on it")
    u = np.array(sample.u, dtype=float)
    peak = float(np.max(np.abs(u)))
    if peak == 0.0:
        raise RuntimeError("radsolve.core.wavefunctions: the sample's wavefunction is zero")
    lobe = int(np.argmax(np.abs(u) >= 1e-3 * peak))
    if u[lobe] < 0:
        u = -u
    above = np.abs(u) >= ORIGIN_FRACTION * peak
    j = int(np.argmax(above))
    j2 = max(int(np.argmax(np.abs(u) >= 100.0 * ORIGIN_FRACTION * peak)), j)
    q = float(min(max(correction_power, 0.25), 1.0))
    coefficient, correction, spread = origin_fit(r, u, j, j2, lam, q)
    grid = SampleGrid(sample=sample, x=x, scale=scale, u=u, j=j, lam=float(lam),
                      coefficient=coefficient, power_law_spread=spread, correction_power=q,
                      correction=correction, j2=j2)
    if j > 0:
        u[:j] = grid.origin_law(r[:j])
    return grid


def origin_fit(r, u, j: int, j2: int, lam: float, q: float, coefficient: float | None = None):
    """(C, a, spread) of u = C r**lam (1 + a r**q) matched at r[j] and r[j2].

    With ``coefficient`` given (C known, e.g. R(0) from a sum rule), a comes
    from r[j] alone.  ``spread``: 2 (a r[j]**q)**2, the size of the neglected
    next term relative to u at r[j].
    """
    c1 = float(u[j] / r[j] ** lam)
    if coefficient is not None:
        a = (c1 / coefficient - 1.0) / r[j] ** q if coefficient else 0.0
        C = float(coefficient)
    elif j2 > j and c1 != 0.0:
        c2 = float(u[j2] / r[j2] ** lam)
        rho = c2 / c1
        denominator = r[j2] ** q - rho * r[j] ** q
        a = (rho - 1.0) / denominator if denominator else 0.0
        C = c1 / (1.0 + a * r[j] ** q)
    else:
        a, C = 0.0, c1
    term = abs(a) * r[j] ** q
    return float(C), float(a), float(min(2.0 * term * term + 1e-300, 1.0))


def breakpoints_on(profile, grids: list[SampleGrid]) -> bool:
    """V (probed as ``profile``) has a breakpoint inside the finest of these sample grids: the
    method's error series there is its breakpoint one (``RadialSolver.orders``)."""
    return bool(grids) and profile.breakpoints_between(grids[-1].r[0], grids[-1].r[-1])


def prepared_samples(level, lam: float, correction_power: float = 1.0) -> list[SampleGrid]:
    """Every sample of ``level`` prepared (coarsest first)."""
    if not level.samples:
        raise InputError(f"level {level.label} carries no wavefunction samples")
    return [prepare(s, lam, correction_power) for s in level.samples]


# ---------------------------------------------------------------- extrapolation of arrays


def richardson_arrays(series: list[np.ndarray], orders: tuple[int, ...]) -> tuple[np.ndarray, np.ndarray]:
    """Point-by-point Richardson extrapolation of arrays on grids h, h/2, h/4, ...

    Returns (value, estimate): the extrapolated array and the larger of the
    last two changes of it (common practice for Richardson tables).  With
    one array the estimate is inf; with two, the single step's change.
    """
    table = [list(series)]
    for j in range(min(len(series) - 1, len(orders))):
        factor = 2.0 ** orders[j] - 1.0
        prev = table[-1]
        table.append([prev[i + 1] + (prev[i + 1] - prev[i]) / factor for i in range(len(prev) - 1)])
    best = table[-1][-1]
    if len(table) == 1:
        return best, np.full_like(best, np.inf)
    estimate = np.abs(best - table[-2][-1])
    if len(table[-1]) >= 2:
        estimate = np.maximum(estimate, np.abs(best - table[-1][-2]))
    elif len(table) >= 3:
        estimate = np.maximum(estimate, np.abs(best - table[-2][-2]))
    return best, estimate


def _extrapolated_u(grids: list[SampleGrid], orders: tuple[int, ...], keep: int = 4):
    """u on the finest grid, extrapolated across the finest ``keep`` samples.

    The extrapolation is done on the points of the coarsest sample used
    (which every finer grid contains), and the correction it makes is
    interpolated to the remaining finest-grid points: the correction is
    small and smooth, so interpolating it costs nothing in accuracy, while
    interpolating a coarse u itself would.
    """
    used = grids[-keep:]
    fine = used[-1]
    if len(used) == 1:
        return fine.u.copy(), np.full_like(fine.u, np.inf)
    coarse = used[0]
    stride = [round((coarse.step / g.step)) for g in used]
    series = [g.u[:: s] for g, s in zip(used, stride)]
    n_common = min(s.size for s in series)
    series = [s[:n_common] for s in series]
    value, estimate = richardson_arrays(series, orders)
    correction = value - series[-1]
    fine_index = np.arange(fine.u.size) / stride[-1]
    corr_fine = _local(correction, np.clip(fine_index, 0, n_common - 1))
    est_fine = np.maximum(_local(estimate, np.clip(fine_index, 0, n_common - 1)), 0.0)
    # the local maximum of the estimate between coarse points, not an interpolated dip
    est_fine = np.maximum(est_fine, np.repeat(estimate, stride[-1])[: fine.u.size])
    return fine.u + corr_fine, est_fine


# ---------------------------------------------------------------- the exported object


@dataclass
class Wavefunction:
    """u(r) and R(r) = u(r)/r of one level, with point-wise error estimates.

    Attributes
    ----------
    r : ndarray
        Radii, bohr: the finest solver grid, or the radii asked for.
    u, u_error : ndarray
        Reduced radial function (bohr**-1/2), Richardson-extrapolated across
        the refinement sequence, and its estimated absolute error.
    R, R_error : ndarray
        R = u/r (bohr**-3/2) and its estimated error; at r = 0, R(0) for
        l = 0 (from the origin power law) and 0 for l > 0.
    weights : ndarray or None
        On the solver grid, quadrature weights (bohr) with
        sum(weights * f) ~ integral of f dr; None for radii asked for.
    on_grid : bool
        Whether ``r`` is the solver's grid.
    label, n, l : str, int, int
        The level.
    energy, energy_error : float
        The level's energy and its estimate, hartree.
    mass : float
        Reduced mass, electron masses.
    potential : str
        The potential's family name; ``parameters`` its parameter values.
    box_radius : float
        The outer radius of the solver's box, bohr; u is reported as 0 beyond
        it (it has decayed there below the energy tolerance).
    properties : dict
        Optional plain-data summary of the state (expectation values), added
        by :meth:`radsolve.analysis.observables.State.wavefunction`.
    """

    r: np.ndarray
    u: np.ndarray
    u_error: np.ndarray
    R: np.ndarray
    R_error: np.ndarray
    weights: np.ndarray | None
    on_grid: bool
    label: str
    n: int
    l: int
    energy: float
    energy_error: float
    mass: float
    potential: str = ""
    parameters: dict = field(default_factory=dict)
    box_radius: float = math.inf
    properties: dict = field(default_factory=dict)

    sign_convention = SIGN_CONVENTION

    # ------------------------------------------------------------ plain data

    def columns(self) -> dict[str, np.ndarray]:
        """Column name (quantity/unit, ISO 80000-1 style) -> array."""
        cols = {
            "r/bohr": self.r,
            "u/bohr^-1/2": self.u,
            "u_error/bohr^-1/2": self.u_error,
            "R/bohr^-3/2": self.R,
            "R_error/bohr^-3/2": self.R_error,
        }
        if self.weights is not None:
            cols["weight/bohr"] = self.weights
        return cols

    def metadata(self) -> dict[str, Any]:
        """Everything but the arrays, as plain data."""
        return {
            "label": self.label,
            "n": self.n,
            "l": self.l,
            "energy_hartree": self.energy,
            "energy_error_hartree": self.energy_error,
            "mass_electron_masses": self.mass,
            "potential": self.potential,
            "parameters": dict(self.parameters),
            "radii": "solver grid (finest)" if self.on_grid else "given",
            "box_radius_bohr": self.box_radius,
            "sign_convention": SIGN_CONVENTION,
            "normalization": "integral of u^2 dr = 1; psi = R(r) Y_lm(theta, phi)",
            "units": {"r": "bohr", "u": "bohr^-1/2", "R": "bohr^-3/2", "weight": "bohr"},
            "properties": self.properties,
        }

    def to_dict(self) -> dict[str, Any]:
        """Metadata plus the columns as lists (short keys r, u, u_error, R, R_error, weights)."""
        out = self.metadata()
        out.update({"r": self.r.tolist(), "u": self.u.tolist(), "u_error": self.u_error.tolist(),
                    "R": self.R.tolist(), "R_error": self.R_error.tolist()})
        if self.weights is not None:
            out["weights"] = self.weights.tolist()
        return out

    def to_json(self) -> str:
        """JSON text of :meth:`to_dict` (non-finite numbers as null)."""
        from radsolve.core.serialize import plain as plain_data

        return json.dumps(plain_data(self.to_dict()), indent=1, allow_nan=False) + "\n"

    def to_csv(self) -> str:
        """CSV text: a header row of quantity/unit names, then one row per radius."""
        cols = self.columns()
        buf = io.StringIO()
        writer = csv.writer(buf, lineterminator="\n")
        writer.writerow(list(cols))
        for row in zip(*cols.values()):
            writer.writerow([repr(float(v)) if math.isfinite(v) else "" for v in row])
        return buf.getvalue()

    def save(self, path) -> Path:
        """Write to ``path`` in the format its extension names (.csv, .json, .npz).

        Raises
        ------
        InputError
            For another extension or a folder that does not exist.
        """
        arrays = {"r": self.r, "u": self.u, "u_error": self.u_error, "R": self.R, "R_error": self.R_error}
        if self.weights is not None:
            arrays["weights"] = self.weights
        return save_export(path, self.to_csv, self.to_json, self.metadata(), arrays)


def save_export(path, to_csv, to_json, metadata: dict, arrays: dict) -> Path:
    """Write a state to ``path`` in the format its extension names: ``to_csv()`` or
    ``to_json()`` text, or an .npz of ``arrays`` with ``metadata`` as JSON.

    Raises
    ------
    InputError
        For another extension, a folder that does not exist, or a file that cannot be written.
    """
    from radsolve.core.serialize import plain as plain_data

    path = Path(path)
    fmt = export_format(path)
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(f"{str(path)!r}: folder {str(folder)!r} does not exist")
    try:
        if fmt == "csv":
            path.write_text(to_csv(), encoding="utf-8")
        elif fmt == "json":
            path.write_text(to_json(), encoding="utf-8")
        else:
            meta = json.dumps(plain_data(metadata), allow_nan=False)
            with open(path, "wb") as handle:
                np.savez(handle, metadata=np.array(meta), **arrays)
    except OSError as exc:
        raise InputError(f"{str(path)!r}: cannot write: {exc.strerror}") from None
    return path


def export_format(path) -> str:
    """``"csv"``, ``"json"`` or ``"npz"`` from a file name's extension (InputError otherwise)."""
    suffix = Path(path).suffix.lower()
    try:
        return EXPORT_FORMATS[suffix]
    except KeyError:
        raise InputError(f"{str(path)!r}: unknown file type {suffix or '(no extension)'!r}; "
                         f"allowed: {', '.join(EXPORT_FORMATS)}") from None


def _radii(r) -> np.ndarray:
    try:
        radii = np.atleast_1d(np.asarray(r, dtype=float))
    except (TypeError, ValueError):
        raise InputError(f"r must be radii in bohr (numbers >= 0), got {r!r}", parameter="r") from None
    if radii.ndim != 1:
        raise InputError("r must be a one-dimensional list of radii in bohr", parameter="r")
    bad = ~np.isfinite(radii) | (radii < 0)
    if bad.any():
        raise InputError(f"r must be finite radii >= 0 bohr, got {float(radii[bad][0])!r}", parameter="r")
    return radii


def build_wavefunction(level, grids: list[SampleGrid], orders: tuple[int, ...], r=None,
                       origin_R: tuple[float, float] | None = None, wall_kappa: float | None = None,
                       **meta) -> Wavefunction:
    """The :class:`Wavefunction` of ``level`` from its prepared samples.

    Parameters
    ----------
    level : Level
    grids : list of SampleGrid
        ``prepared_samples(level, lam)``.
    orders : tuple of int
        Error orders of the method that made the samples.
    r : array_like, optional
        Radii (bohr, >= 0) to interpolate to; default the finest solver grid.
    origin_R : (float, float), optional
        R(0) and its error from a better source (the contact-density sum
        rule), used at r = 0 for an s state.
    wall_kappa : float, optional
        Decay constant sqrt(2 mu (V_eff - E)) at the outer wall, 1/bohr.  The
        wall forces u(r_max) = 0 where the free state has about
        u(r_max - 1/kappa)/e; that difference, decaying inwards like
        exp(-kappa (r_max - r)), is added to the estimates.
    **meta
        ``mass``, ``potential``, ``parameters``, ``properties`` for the record.
    """
    fine = grids[-1]
    u_grid, err_grid = _extrapolated_u(grids, orders)
    lam = fine.lam
    # the origin law of the extrapolated u, and its uncertainty
    given = origin_R[0] if (origin_R is not None and abs(lam - 1.0) < 1e-12) else None
    coefficient, correction, spread = origin_fit(fine.r, u_grid, fine.j, fine.j2, lam,
                                                 fine.correction_power, given)
    if given is not None:
        coefficient_error = origin_R[1]
    else:
        coefficient_error = float(err_grid[fine.j] / fine.r[fine.j] ** lam)
    extrap = SampleGrid(sample=fine.sample, x=fine.x, scale=fine.scale, u=u_grid.copy(), j=fine.j,
                        lam=lam, coefficient=coefficient, power_law_spread=spread,
                        correction_power=fine.correction_power, correction=correction, j2=fine.j2)
    inner = fine.r[: fine.j]
    u_grid = extrap.u
    u_grid[: fine.j] = extrap.origin_law(inner)

    def origin_error(radius):
        # the coefficient's error, and the neglected next term (growing like r**2q)
        rel = spread * (radius / fine.r[fine.j]) ** (2.0 * fine.correction_power)
        return (coefficient_error + abs(coefficient) * rel) * radius**lam

    err_grid = err_grid.copy()
    err_grid[: fine.j] = origin_error(inner)
    if wall_kappa is not None and wall_kappa > 0:
        r_max = fine.r[-1]
        inside_wall = max(r_max - 1.0 / wall_kappa, fine.r[0])
        amplitude = abs(float(_local(u_grid, fine.index_of(np.array([inside_wall])))[0])) / math.e
        err_grid += amplitude * np.exp(-wall_kappa * (r_max - fine.r))
    if r is None:
        radii = fine.r.copy()
        u, err = u_grid, err_grid
        weights = fine.weights.copy()
    else:
        radii = _radii(r)
        u = extrap.values_at(radii)
        inside = (radii >= fine.r[0]) & (radii <= fine.r[-1])
        err = np.zeros_like(radii)
        if inside.any():
            xi = fine.index_of(radii[inside])
            nearest = np.clip(np.rint(xi).astype(int), 0, fine.r.size - 1)
            # a lower-order interpolant's disagreement bounds the interpolation error
            lower = _local_lower(u_grid, xi)
            err[inside] = err_grid[nearest] + np.abs(u[inside] - lower)
        below = (radii > 0) & (radii < fine.r[0])
        err[below] = origin_error(radii[below])
        weights = None
    R = np.zeros_like(u)
    R_err = np.zeros_like(u)
    positive = radii > 0
    R[positive] = u[positive] / radii[positive]
    R_err[positive] = err[positive] / radii[positive]
    at_zero = radii == 0
    if at_zero.any() and abs(lam - 1.0) < 1e-12:
        if origin_R is not None:
            R[at_zero], R_err[at_zero] = origin_R
        else:
            R[at_zero] = coefficient  # u ~ C r: R(0) = C
            R_err[at_zero] = coefficient_error
    elif at_zero.any() and lam < 1.0:
        R[at_zero] = np.inf
    return Wavefunction(
        r=radii, u=u, u_error=err, R=R, R_error=R_err, weights=weights, on_grid=r is None,
        label=level.label, n=level.n, l=level.l, energy=level.energy,
        energy_error=level.error_estimate, mass=meta.get("mass", float("nan")),
        potential=meta.get("potential", ""), parameters=dict(meta.get("parameters", {})),
        box_radius=float(fine.r[-1]), properties=dict(meta.get("properties", {})),
    )


def _local_lower(values: np.ndarray, xi: np.ndarray) -> np.ndarray:
    """A 6-point interpolant, to gauge the 8-point one's error."""
    xi = np.atleast_1d(xi)
    start = np.clip(np.floor(xi).astype(int) - 2, 0, values.size - 6)
    t = xi - start
    nodes = np.arange(6.0)
    weights = np.ones((xi.size, 6))
    for k in range(6):
        for m in range(6):
            if m != k:
                weights[:, k] *= (t - nodes[m]) / (nodes[k] - nodes[m])
    idx = start[:, None] + np.arange(6)[None, :]
    return np.sum(weights * values[idx], axis=1)


def wavefunction(state, r=None) -> Wavefunction:
    """u(r) and R(r) of a state, on the solver grid or at radii ``r`` (bohr).

    Parameters
    ----------
    state : radsolve.analysis.observables.State
        From :func:`radsolve.state` (or ``State.from_result``).
    r : array_like, optional
        Radii in bohr (>= 0).  Default: the finest solver grid, with its
        quadrature weights.

    Returns
    -------
    Wavefunction
        With :meth:`~Wavefunction.save` to CSV, JSON or ``.npz``.
    """
    return state.wavefunction(r)
