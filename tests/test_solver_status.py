"""HiGHS's refusals are clear failures, never an IndexError or a status "error" with "Empty".

Facts checked: HiGHS refuses a matrix entry above its option large_matrix_value (1e15) and reads
|cost| or a bound ≥ 1e20 as infinite (its options infinite_cost, infinite_bound: HiGHS options
documentation); that it then holds an empty model and takes NaN silently was observed with highspy
1.16; a solver that cannot take a model must say so, naming the number (common practice, no source).
The case is built in memory past any input maxima, so the engine's own check is what is tested.
"""

from __future__ import annotations

import numpy as np
import pytest
from casekit import make_case_dir, tiny_rows
from scipy import sparse

from netopt.data.io import load_case
from netopt.engine.highs import INF, compile_model, pass_matrices
from netopt.engine.highs_check import ModelRejected
from netopt.engine.solve import solve
from netopt.model import build_model
from netopt.network.arcs import build_network
from netopt.network.lanes import case_lanes


def _case_with(tmp_path, table: str, column: str, value: float):
    """The tiny case with one number set after validation (so no input maximum stops it)."""
    case = load_case(make_case_dir(tmp_path))
    frame = case.tables[table]
    frame.loc[frame.index[0], column] = value
    return case


@pytest.mark.parametrize(
    "table, column, value, named",
    [
        ("demand", "quantity", 1e15, "dc_throughput"),
        ("bill_of_materials", "quantity_per_unit", 1e308, "plant_materials"),
    ],
)
def test_a_number_highs_refuses_is_a_clear_failure(tmp_path, table, column, value, named):
    r = solve(_case_with(tmp_path, table, column, value))
    assert r.status == "error" and not r.has_solution
    assert r.message.startswith("HiGHS rejected the model: a coefficient of")
    assert named in r.message and "1e+15" in r.message
    assert r.verification is None and r.diagnosis is None


def _small(**kw):
    a = dict(
        c=np.array([1.0, 1.0]),
        A=sparse.csc_matrix(np.array([[1.0, 1.0]])),
        row_lo=np.array([1.0]),
        row_hi=np.array([INF]),
        col_lo=np.zeros(2),
        col_hi=np.full(2, INF),
    )
    a.update(kw)
    return a


@pytest.mark.parametrize(
    "change, said",
    [
        (dict(A=sparse.csc_matrix(np.array([[1.0, 1e16]]))), "coefficient of 1e+16"),
        (dict(A=sparse.csc_matrix(np.array([[np.nan, 1.0]]))), "not a finite number"),
        (dict(c=np.array([np.nan, 1.0])), "cost per unit of column 0"),
        (dict(row_lo=np.array([1e21])), "lower bound of row 0"),
        (dict(col_hi=np.array([np.nan, INF])), "bound of column 0 is not a number"),
    ],
)
def test_pass_matrices_refuses_what_highs_would_take_wrongly(change, said):
    """Without the check HiGHS held an empty model ("Empty") or solved a NaN cost to an "optimal" plan."""
    with pytest.raises(ModelRejected, match="HiGHS rejected the model") as e:
        pass_matrices(**_small(**change))
    assert said in str(e.value)


def test_a_refused_bound_change_is_not_ignored(tmp_path):
    """HiGHS answers a NaN bound with an error and keeps the old bound: that must not pass unseen."""
    case = load_case(make_case_dir(tmp_path))
    hm = compile_model(build_model(build_network(case, case_lanes(case))))
    with pytest.raises(ModelRejected, match="refused to change the bounds of variables 'make'"):
        hm.set_bounds("make", np.array([0]), np.array([np.nan]), np.array([1.0]))


def test_zero_capacity_everywhere_is_infeasible_not_a_compiler_error(tmp_path):
    """Every capacity 0: the capacity cover row has only zero coefficients; it was a Pyomo
    InfeasibleConstraintException traceback, now an infeasible result with a diagnosis."""
    case = load_case(make_case_dir(tmp_path))
    for table in ("plants", "dcs", "suppliers"):
        case.tables[table]["capacity"] = 0.0
    r = solve(case)
    assert r.status == "infeasible" and r.diagnosis is not None and len(r.diagnosis)


def test_a_changed_mip_is_solved_afresh_when_highs_keeps_an_old_plan(tmp_path):
    """highspy 1.16: re-solving a solved MIP after a bound is loosened to infinity kept the old plan
    (1,000 made, 500 units unmet) and reported another objective; the answer must cost what it says."""
    rows = tiny_rows()
    rows["plants"][0]["capacity"] = "1000"
    case = load_case(make_case_dir(tmp_path, **rows))
    hm = compile_model(build_model(build_network(case, case_lanes(case)), elastic=True))
    assert hm.solve().objective > 1e8  # 500 units unmet at the elastic penalty
    hm.set_bounds("make", np.array([0]), np.zeros(1), np.full(1, np.inf))
    info = hm.solve()
    lp = hm.highs.getLp()
    x = np.asarray(hm.highs.getSolution().col_value)
    assert info.objective == pytest.approx(float(np.asarray(lp.col_cost_) @ x + lp.offset_), rel=1e-9)
    assert hm.values()["make"][0] == pytest.approx(1500.0)
