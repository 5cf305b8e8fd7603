"""Demo: a muon and an electron bound to a lead-like nucleus, with three nuclear shapes.

A scenario of our own, for illustration: a nucleus of charge Z = 82 with an rms charge radius of
5.5 fm (a round number of the right size, not an evaluated radius), modelled as a uniformly charged
sphere, a Gaussian and a two-parameter Fermi distribution with the same rms radius.  For each shape
the script prints the 1s1/2, 2p1/2 and 2p3/2 levels of

- a muon (reduced mass of a muon and a nucleus of 208 u), where the orbit is comparable to the
  nucleus and the finite size changes the levels by MeV, and
- an electron (same nucleus), where it changes the 1s level by tens of eV,

with the Dirac equation and, beside it, the Schrodinger equation, and the finite-size shift of each
(the level minus that of a point charge; the point-charge Dirac value is Sommerfeld's formula,
computed by radsolve for the coulomb family).  The 2p fine-structure splitting comes out of the
Dirac equation directly.

Run:  python examples/heavy_nucleus_finite_size.py
The same level list from the shell, e.g.:
  radsolve levels finite_nucleus -p Z=82 -p radius=5.5fm -p model=fermi --mass muon+208u \
      --lmax 1 --count 1 --equation dirac --unit keV

This is a model calculation: vacuum polarisation, the Lamb shift, nuclear polarisation, hyperfine
structure and recoil beyond the reduced mass are left out, and the charge distributions are models.
For measured muonic or electronic transition energies use the established analyses of the nucleus
at hand.
"""

from scipy.constants import physical_constants

import radsolve

HARTREE_KEV = physical_constants["Hartree energy in eV"][0] / 1e3
Z, RADIUS = 82, "5.5fm"
PARTICLES = {"muon": "muon+208u", "electron": "electron+208u"}


def levels(model, mass, equation):
    if model == "point":
        pot = radsolve.potential("coulomb", Z=Z)
    else:
        pot = radsolve.potential("finite_nucleus", Z=Z, radius=RADIUS, model=model)
    res = radsolve.solve(pot, l=[0, 1], count=1, mass=mass, equation=equation, tol=1e-10)
    if not res.success:
        print("   note:", res.message)
    return {lev.label: lev for lev in res.levels}


def main():
    for particle, mass in PARTICLES.items():
        print(f"== {particle} bound to Z = {Z}, rms charge radius {RADIUS} (energies in keV, E - mc^2)")
        point_d = levels("point", mass, "dirac")
        point_s = levels("point", mass, "schrodinger")
        print(f"{'shape':9s} {'level':6s} {'Dirac':>16s} {'shift':>12s} {'Schrodinger':>16s} {'shift':>12s}")
        for model in ("uniform", "gaussian", "fermi"):
            dirac = levels(model, mass, "dirac")
            schr = levels(model, mass, "schrodinger")
            for label, plain in (("1s1/2", "1s"), ("2p1/2", "2p"), ("2p3/2", "2p")):
                d, s = dirac[label], schr[plain]
                print(f"{model:9s} {label:6s} {d.energy * HARTREE_KEV:16.6f} "
                      f"{(d.energy - point_d[label].energy) * HARTREE_KEV:12.6f} "
                      f"{s.energy * HARTREE_KEV:16.6f} {(s.energy - point_s[plain].energy) * HARTREE_KEV:12.6f}")
            split = (dirac["2p3/2"].energy - dirac["2p1/2"].energy) * HARTREE_KEV
            print(f"{'':9s} 2p3/2 - 2p1/2 fine structure: {split:.4f} keV (none without the Dirac equation)")
        print()


if __name__ == "__main__":
    main()
