"""Every result type follows one protocol (radsolve.core.protocol), tested once for all.

The protocol is structure, not physics: status and success agree, exit codes
derive from the status, the message is built from the coded notes, the JSON,
CSV and pandas views hold the same records, and the repr is short and free of
grid arrays.  The physics of each result is tested in its own file; here each
case is also held to one outside fact where it is cheap (the exact hydrogen
levels, textbook formula), so that a structurally perfect but wrong result
cannot pass.
"""

from __future__ import annotations

import csv
import io
import json
import math

import pytest

import radsolve
from radsolve.core.protocol import EXIT_CODES, Note, Outcome, ResultProtocol


def _solve_ok():
    return radsolve.solve("coulomb", l=[0, 1], count=2, tol=1e-8)


def _solve_rounding():
    # tol below what double precision allows on these grids: an honest "not converged"
    return radsolve.solve("coulomb", count=2, tol=1e-14)


def _state():
    return radsolve.state("coulomb", 2, 1, tol=1e-8)


def _summary():
    return radsolve.state("coulomb", 2, 1, tol=1e-8).summary(moments=[3])


def _transitions():
    return radsolve.transitions("coulomb", 2, tol=1e-8)


def _threshold():
    return radsolve.threshold("yukawa", "screening_length", level="1s", bracket=(0.5, 1.5), tol=1e-6)


def _critical_values():
    return radsolve.critical_values("yukawa", "screening_length", levels=["1s", "2p"], tol=1e-6)


def _fit():
    # targets: the exact hydrogen 1s and 2p levels (textbook formula -Z^2/(2 n^2)), Z fitted from 1.2
    return radsolve.fit("coulomb", [("1s", -0.5, 1e-4), ("2p", -0.125, 1e-4)], free=["Z"], fixed={"Z": 1.2},
                        tol=1e-9)


def _sweep():
    return radsolve.sweep("coulomb", {"Z": [1.0, 2.0]}, l=[0, 1], count=2, tol=1e-8)


def _check():
    return radsolve.check(tol=1e-8, charges=(1,), masses=(1.0,), nmax=2)


def _phase_shifts():
    # hard sphere of radius 1 in a zero potential, s and p waves
    return radsolve.phase_shifts(radsolve.formula_potential("0*r"), [0.5, 2.0], l=[0, 1], hard_core=1.0, tol=1e-9)


def _scattering():
    return radsolve.scattering(radsolve.formula_potential("0*r"), l=0, hard_core=1.0, tol=1e-8)


def _photoionization():
    return radsolve.photoionization("coulomb", "1s", [0.6, 1.0], tol=1e-8)


def _log_derivatives():
    return radsolve.log_derivatives("coulomb", [-0.5, 0.2], l=0, radius=2.0, reference="yukawa", tol=1e-8)


def _resonances():
    return radsolve.resonances(radsolve.formula_potential("-V0*step(1-r)", V0=9.8), l=2, window=(0.05, 1.0))


def _scattering_sweep():
    return radsolve.scattering_sweep("yukawa", "screening_length", [0.8, 0.9], l=0, tol=1e-6)


def _continuum_wave():
    return radsolve.continuum_wave(radsolve.formula_potential("0*r"), 0.5, 0, r=[1.0, 2.0, 3.0], tol=1e-9)


def _dirac_state():
    from radsolve.analysis.relativistic import dirac_state

    return dirac_state(radsolve.potential("coulomb", Z=92), 2, 1, 1.5, tol=1e-8)


def _solve_dirac():
    return radsolve.solve(radsolve.potential("coulomb", Z=40), l=[0, 1], count=2, equation="dirac", tol=1e-8)


CASES = {
    "continuum_wave": _continuum_wave,
    "log_derivatives": _log_derivatives, "resonances": _resonances, "scattering_sweep": _scattering_sweep,
    "phase_shifts": _phase_shifts, "scattering": _scattering, "photoionization": _photoionization,
    "solve": _solve_ok, "solve_not_converged": _solve_rounding, "state": _state, "summary": _summary,
    "transitions": _transitions, "threshold": _threshold, "critical_values": _critical_values,
    "fit": _fit, "check": _check, "sweep": _sweep, "solve_dirac": _solve_dirac,
    "dirac_state": _dirac_state,
}


#: The type each case returns (checked in test_status_success_and_exit_code_agree).
CASE_TYPES = {
    "phase_shifts": "PhaseShiftResult", "scattering": "ScatteringResult",
    "photoionization": "PhotoionizationResult", "log_derivatives": "LogDerivativeResult",
    "resonances": "ResonanceResult", "scattering_sweep": "ScatteringSweepResult",
    "continuum_wave": "ContinuumWave",
    "solve": "SolveResult", "solve_not_converged": "SolveResult", "state": "State", "summary": "StateSummary",
    "transitions": "TransitionResult", "threshold": "ThresholdResult", "critical_values": "CriticalValues",
    "fit": "FitResult", "check": "CheckReport", "sweep": "SweepResult", "solve_dirac": "SolveResult",
    "dirac_state": "DiracStateSummary",
}


@pytest.fixture(scope="module", params=sorted(CASES))
def result(request):
    return request.param, CASES[request.param]()


def test_status_success_and_exit_code_agree(result):
    name, res = result
    assert type(res).__name__ == CASE_TYPES[name]
    assert isinstance(res, ResultProtocol)
    assert isinstance(res.status, Outcome)
    assert res.success is (res.status is Outcome.SUCCESS)
    assert res.exit_code == EXIT_CODES[res.status]
    assert (res.exit_code == 0) is res.success


def test_message_is_built_from_the_notes(result):
    _, res = result
    assert isinstance(res.message, str) and res.message
    for note in res.notes:
        assert isinstance(note, Note) and note.code and note.text
        assert note.text in res.message
    if not res.success:
        assert res.notes, "a result that is not a success must say why in a coded note"


def test_json_document_round_trips_and_states_the_status(result):
    _, res = result
    doc = json.loads(res.to_json())
    assert doc == json.loads(json.dumps(res.to_dict()))  # to_json is to_dict as JSON
    assert doc["success"] is res.success
    assert doc["status"] == str(res.status)
    assert doc["message"] == res.message


def test_csv_and_pandas_hold_the_records(result):
    _, res = result
    records = res.records()
    assert isinstance(records, list) and records and all(isinstance(r, dict) for r in records)
    text = "\n".join(line for line in res.to_csv().splitlines() if not line.startswith("#"))
    rows = list(csv.DictReader(io.StringIO(text)))
    assert len(rows) == len(records)
    columns = [c for r in records for c in r]
    assert set(rows[0]) == set(columns)


@pytest.mark.needs_pandas
def test_pandas_frame_holds_the_records(result):
    import pandas as pd

    _, res = result
    frame = res.to_pandas()
    header = next(line for line in res.to_csv().splitlines() if not line.startswith("#")).split(",")
    assert isinstance(frame, pd.DataFrame) and len(frame) == len(res.records())
    # the CSV columns in order; a sweep keeps its 0.1 frame, whose unit sits in frame.attrs
    assert [c for c in header if c in frame.columns] == list(frame.columns)
    assert set(header) - set(frame.columns) <= {"unit"}
    if "unit" in header and "unit" not in frame.columns:
        assert frame.attrs["unit"] == res.records()[0]["unit"]


def test_repr_is_short_and_has_no_arrays(result):
    _, res = result
    text = repr(res)
    assert type(res).__name__ in text and str(res.status) in text
    assert len(text.splitlines()) <= 16
    assert "array(" not in text and "GridSample(" not in text
    assert "<table" in res._repr_html_() or type(res).__name__ == "State"


def test_outside_facts(result):
    # Each case against something outside radsolve (textbook hydrogen formula), so that a
    # structurally perfect but physically wrong result fails here too.
    name, res = result
    if name == "solve":
        assert res.success
        for lev in res.levels:
            assert lev.energy == pytest.approx(-0.5 / lev.n**2, rel=1e-8)
    elif name == "solve_dirac":
        # Sommerfeld's fine-structure formula (textbook), Z = 40, n = 1, 2, 3
        from scipy.constants import fine_structure as alpha

        assert res.success and {lev.label for lev in res.levels} == {"1s1/2", "2s1/2", "2p1/2", "3p1/2",
                                                                       "2p3/2", "3p3/2"}
        for lev in res.levels:
            k = lev.l + 1 if lev.j > lev.l else lev.l
            za = 40 * alpha
            e = 1.0 / (1.0 + (za / (lev.n - k + (k * k - za * za) ** 0.5)) ** 2) ** 0.5
            assert lev.energy == pytest.approx((e - 1.0) / alpha**2, rel=1e-8)
        assert res.to_dict()["equation"] == "dirac"
    elif name == "dirac_state":
        # the nodeless Dirac-Coulomb 2p3/2: G, F ~ r^gamma exp(-Z r / 2), gamma = sqrt(4 - (Z alpha)^2), so
        # <r> = (2 gamma + 1) / Z (textbook closed form), Z = 92
        from scipy.constants import fine_structure as alpha

        gamma = (4.0 - (92 * alpha) ** 2) ** 0.5
        row = next(r for r in res.records() if r["quantity"] == "<r^1>")
        assert row["value"] == pytest.approx((2 * gamma + 1) / 92, rel=1e-8)
    elif name == "solve_not_converged":
        assert res.status is Outcome.NOT_CONVERGED
        assert any(n.code == "not_converged" for n in res.notes)
        for lev in res.levels:
            assert abs(lev.energy + 0.5 / lev.n**2) <= 10 * lev.error_estimate  # honest estimate
    elif name in ("state", "summary"):
        st = res if name == "state" else res.state
        assert st.moment(1).value == pytest.approx(5.0, rel=1e-7)  # <r>_2p = (3n^2 - l(l+1))/2 = 5
        if name == "summary":
            row = next(r for r in res.records() if r["quantity"] == "<r^3>")
            # <r^3> of hydrogen 2p: 210 bohr^3 (textbook closed form for n = 2, l = 1)
            assert row["value"] == pytest.approx(210.0, rel=1e-7)
    elif name == "transitions":
        line = res.line("2p", "1s")
        # f(1s -> 2p) = 2^13/3^9 = 0.41620 (textbook closed form, Bethe & Salpeter 1957)
        assert line.oscillator_strength == pytest.approx(2**13 / 3**9, rel=1e-6)
    elif name == "fit":
        assert res.success and res.values["Z"] == pytest.approx(1.0, abs=1e-4)
    elif name == "sweep":
        assert res.success and len(res.records()) == 2 * 2 * 2
        for row in res.records():  # textbook formula -Z^2/(2 n^2)
            assert row["energy"] == pytest.approx(-row["Z"] ** 2 / (2 * row["n"] ** 2), rel=1e-8)
    elif name == "phase_shifts":
        # hard sphere: delta_0 = -k a (textbook formula), k = sqrt(2 E)
        for row in res.records():
            if row["l"] == 0:
                assert row["phase_shift"] == pytest.approx(-(2 * row["energy"]) ** 0.5, abs=1e-8)
    elif name == "continuum_wave":
        # free s wave per unit energy: sqrt(2/(pi k)) sin(k r), k = 1 (textbook formula)
        for row in res.records():
            assert row["u"] == pytest.approx(math.sqrt(2 / math.pi) * math.sin(row["r"]), abs=1e-7)
    elif name == "scattering_sweep":
        # the 1s level of the Yukawa potential binds at screening length 0.8399 (Rogers, Graboske &
        # Harwood, Phys. Rev. A 1, 1577 (1970); from memory): a_0 < 0 below it, > 0 above, one level
        rows = res.records()
        assert rows[0]["scattering_length"] < 0 < rows[1]["scattering_length"]
        assert [r["bound_levels"] for r in rows] == [0, 1]
    elif name == "resonances":
        # the d-wave pole of a square well V0 = 9.8, R = 1 at E = 0.169804... (mpmath root of the
        # textbook matching condition, tests/test_scattering.py)
        assert res.records()[0]["energy_pole"] == pytest.approx(0.1698040547, abs=1e-8)
    elif name == "log_derivatives":
        # hydrogen 1s, u = 2 r exp(-r): u'/u = 1/r - 1 = -1/2 at r = 2 (textbook formula)
        assert res.records()[0]["log_derivative"] == pytest.approx(-0.5, abs=1e-8)
    elif name == "photoionization":
        # hydrogen 1s at threshold: 6.30e-18 cm^2 (textbook value, Bethe & Salpeter 1957; from memory)
        assert res.threshold_cross_section == pytest.approx(6.30e-18, rel=1e-3)
    elif name == "scattering":
        # hard sphere: a = a_hard, r_0 = 2 a / 3 (textbook formulas)
        row = res.records()[0]
        assert row["scattering_length"] == pytest.approx(1.0, abs=1e-7)
        assert row["effective_range"] == pytest.approx(2.0 / 3.0, abs=1e-6)
    elif name == "check":
        assert res.success and len(res.records()) == sum(len(row.outcomes) for row in res.rows)
    elif name in ("threshold", "critical_values"):
        # 1s of the Yukawa potential unbinds at screening length 0.8399 bohr for Z = 1, mu = 1
        # (Rogers, Graboske & Harwood, Phys. Rev. A 1, 1577 (1970); from memory, 4 digits)
        first = res if name == "threshold" else res[0]
        assert first.value == pytest.approx(0.8399, abs=2e-4)


def test_one_writer_writes_every_format(result):
    from radsolve.output.report import FORMATS, render

    _, res = result
    assert set(FORMATS) == {"table", "json", "csv"}
    assert render(res, None, "json") == res.to_json()
    assert render(res, None, "csv") == res.to_csv()
    table = render(res, None, "table")
    assert isinstance(table, str) and table.strip() and table.endswith("\n")
    with pytest.raises(radsolve.InputError, match="allowed: table, json, csv"):
        render(res, None, "yaml")


def test_every_result_type_is_exported_and_covered():
    import importlib

    for module in ("radsolve.core.result", "radsolve.analysis.observables", "radsolve.analysis.radiative",
                   "radsolve.analysis.thresholds", "radsolve.analysis.fitting", "radsolve.analysis.convergence",
                   "radsolve.analysis.sweeps", "radsolve.analysis.scattering", "radsolve.analysis.relativistic"):
        importlib.import_module(module)

    def subclasses(cls):
        for sub in cls.__subclasses__():
            yield sub
            yield from subclasses(sub)

    types = {cls for cls in subclasses(ResultProtocol) if cls.__module__.startswith("radsolve.")}
    assert types, "no result type found"
    covered = set(CASE_TYPES.values())
    for cls in types:
        assert getattr(radsolve, cls.__name__) is cls, f"{cls.__name__} is not exported from radsolve"
        assert cls.__name__ in covered, f"{cls.__name__} has no case in CASES"
