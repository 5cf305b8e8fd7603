#!/bin/sh
# Demo: fit the charge and the screening length of a Yukawa (Debye-screened)
# ion to three target levels.  The targets in screened_ion_targets.csv are
# INVENTED demo numbers, not measurements; the fitted values describe a model
# potential only.
#
#   sh examples/fit_screened_ion.sh
#
# Prints the best-fit Z and D with standard errors, their correlation, chi2/dof
# and the residual of each level, and draws fit_screened_ion.png.
set -e
here=$(dirname "$0")
radsolve fit yukawa --targets "$here/screened_ion_targets.csv" \
    --free Z:1:4 --free screening_length:1:20 \
    -p Z=1.5 -p screening_length=5 --unit eV --plot fit_screened_ion.png

# Leaving out the 2s target: the fit still reproduces 1s and 2p, and warns that
# the fitted potential binds a 2s level below 2p that is not among the targets.
without_2s=$(mktemp)
trap 'rm -f "$without_2s"' EXIT
grep -v '^2s' "$here/screened_ion_targets.csv" > "$without_2s"
radsolve fit yukawa --targets "$without_2s" \
    --free screening_length:1:20 -p Z=2 -p screening_length=5 --unit eV
