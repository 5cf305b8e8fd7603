"""Demo: a He+ ion in a plasma, screened by free electrons over the Debye length D.

A scenario of our own, for illustration: the electron of a hydrogen-like ion
(Z = 2, reduced mass of an electron and an alpha particle) sees the Yukawa
potential -Z exp(-r/D)/r (the Debye-Hueckel model of the surrounding plasma).
As the plasma gets denser, D shrinks, every level rises and one after the
other they merge into the continuum.

The script

1. sweeps D from 0.2 to 20 bohr (geometric) for the 1s, 2s, 3s, 2p, 3p, 3d
   levels, in parallel, writing the rows to debye_he_plus.csv as they finish;
2. finds the critical Debye length of each of those levels from the
   zero-energy solution, with error estimates;
3. draws the levels against D with the thresholds marked (debye_he_plus.png).

Run:  python examples/debye_screened_helium_ion.py
The same from the shell:
  radsolve sweep yukawa --vary screening_length=0.2:20:120 --log -p Z=2 \
      -l 0 -l 1 -l 2 --count 3 --mass electron+alpha --out debye_he_plus.csv \
      --plot debye_he_plus.png
  radsolve threshold yukawa --vary screening_length --nmax 3 -p Z=2 --mass electron+alpha

This is a model calculation: the Debye-Hueckel picture of a plasma is a
simplification, and the critical lengths here are properties of the model,
not predictions of when a real ion in a real plasma loses its bound states.
"""

import numpy as np

from radsolve import critical_values, sweep
from radsolve.output.sweep_plotting import plot_sweep


def main() -> None:
    lengths = np.geomspace(0.2, 20.0, 120)  # bohr
    result = sweep("yukawa", vary={"screening_length": lengths}, fixed={"Z": 2.0}, l=[0, 1, 2],
                   count=3, mass="electron+alpha", tol=1e-9, out="debye_he_plus.csv")
    print(f"{len(result)} rows written to debye_he_plus.csv "
          f"({result.unconverged} bound levels not converged)")

    critical = critical_values("yukawa", "screening_length", nmax=3, fixed={"Z": 2.0},
                          mass="electron+alpha", bracket=(0.1, 30.0))
    for res in critical:
        print(f"  {res.label}: bound for D > {res.value:.9f} +- {res.error_estimate:.1e} bohr")

    keep = {r.label: r for r in critical if r.label in result.labels()}
    plot_sweep(result, "debye_he_plus.png", thresholds=keep,
               title="He+ in a Debye plasma (model): levels against the screening length")
    print("plot written to debye_he_plus.png")


if __name__ == "__main__":  # worker processes re-import this file
    main()
