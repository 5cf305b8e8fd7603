"""An independent reference for bound-state energies: scipy's solve_ivp shooting.

No radsolve code is used.  The radial equation
-u''/(2 mu) + [V + l(l+1)/(2 mu r^2)] u = E u is integrated outward with DOP853
from a small r0, where u starts as given (by default u ~ r^(l+1), right for a V
regular at the origin); the energy is bracketed by the node count (Sturm
oscillation theorem, textbook) and refined with brentq on u(r_max) = 0.
"""

from scipy.integrate import solve_ivp
from scipy.optimize import brentq


def shooting_energy(V, l, nodes, E_lo, E_hi, r_max, mu=1.0, r0=1e-6, start=None):
    """Energy of the level with ``nodes`` interior zeros, between E_lo and E_hi.

    ``start(r0) -> (u, du/dr)`` overrides the pure power law at r0 (e.g. with
    the Coulomb series for a -Z/r singularity).
    """
    energy = [0.0]

    def rhs(r, y):
        return [y[1], (l * (l + 1) / r**2 + 2.0 * mu * (V(r) - energy[0])) * y[0]]

    def crossing(r, y):
        return y[0]

    y0 = list(start(r0)) if start is not None else [r0 ** (l + 1), (l + 1) * r0**l]

    def run(E):
        energy[0] = E
        sol = solve_ivp(rhs, (r0, r_max), y0, method="DOP853", rtol=1e-12, atol=1e-300, events=crossing)
        assert sol.success, sol.message
        return sol.y[0][-1], len(sol.t_events[0])

    (a, ka), (b, kb) = (E_lo, run(E_lo)[1]), (E_hi, run(E_hi)[1])
    assert ka <= nodes < kb, (ka, kb)
    while not (ka == nodes and kb == nodes + 1):
        m = 0.5 * (a + b)
        k = run(m)[1]
        if k <= nodes:
            a, ka = m, k
        else:
            b, kb = m, k
    return brentq(lambda E: run(E)[0], a, b, xtol=1e-15, rtol=1e-14)
