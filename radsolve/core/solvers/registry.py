"""The method registry: name -> "module:Class", with no heavy import (the command line reads it at start-up).

Adding a method: write ``radsolve/core/solvers/mymethod.py`` with a subclass
of :class:`radsolve.core.solvers.base.RadialSolver` whose class attribute
``name`` is ``"mymethod"``, and add one line to each table here.  The command line's
``--method`` choices, ``radsolve check``, ``method="both"`` and the solver
contract test (tests/test_solver_contract.py) all read this table.
"""

#: Method name -> "module:Class", imported on first use.
METHODS: dict[str, str] = {
    "fd": "radsolve.core.solvers.fd:FiniteDifference",
    "numerov": "radsolve.core.solvers.numerov:NumerovShooting",
}

#: Method name -> a few words for the command line's help.
DESCRIPTIONS: dict[str, str] = {
    "fd": "finite differences",
    "numerov": "Numerov shooting",
}

#: The name that runs every registered method and folds their disagreement into the estimates.
EVERY_METHOD = "both"
