"""plan_matrix: every row equals the single-condition plan() at that condition.

The reference is plan() called for one condition at a time (a straightforward per-point loop), which walks
the same models through the same engine; the check is that evaluating the whole matrix at once changes no
value (the optimizers' per-condition results do not depend on what else is in the batch). Tolerance 1e-9
relative (common practice for "the same arithmetic, reordered").
"""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

from backbone.errors import BackboneError
from backbone.experiments import registered_experiments
from backbone.labeling import registered_schemes
from backbone.plan import plan, plan_matrix

_RNG = np.random.default_rng(20261201)
_TAU_C = np.sort(_RNG.uniform(2.0, 60.0, 6))
_FIELDS = np.array([600.0, 950.0])


@pytest.fixture(scope="module")
def matrix():
    return plan_matrix(tau_c_ns=_TAU_C, field_mhz=_FIELDS)


def test_matrix_has_one_row_per_experiment_labeling_field_tau_c(matrix):
    n = len(registered_experiments()) * len(registered_schemes()) * _FIELDS.size * _TAU_C.size
    assert len(matrix) == n
    assert not matrix.duplicated(["labeling", "experiment", "field_mhz", "tau_c_ns"]).any()


@pytest.mark.parametrize("labeling", sorted(registered_schemes()))
def test_matrix_rows_equal_single_condition_plans(matrix, labeling):
    picks = [(int(_RNG.integers(_FIELDS.size)), int(_RNG.integers(_TAU_C.size))) for _ in range(2)]
    for i_f, i_t in picks:
        single = plan(tau_c_ns=_TAU_C[i_t], field_mhz=_FIELDS[i_f], labeling=labeling)
        rows = matrix[
            (matrix.labeling == labeling) & (matrix.field_mhz == _FIELDS[i_f]) & (matrix.tau_c_ns == _TAU_C[i_t])
        ]
        assert len(rows) == len(single.experiments)
        for e in single.experiments:
            row = rows[rows.experiment == e.name].iloc[0]
            assert bool(row.feasible) == e.feasible
            d = e.as_dict()
            assert_allclose(row.relative_sensitivity, d["relative_sensitivity"] if d["relative_sensitivity"] is not None else np.nan, rtol=1e-9, equal_nan=True)
            assert_allclose(row.objective_throughput, float(e.objective_value), rtol=1e-9, atol=0.0)
            assert_allclose(row.textbook_objective_throughput, float(e.textbook_objective_value), rtol=1e-9)
            for name, value in e.delays.items():
                assert_allclose(row[f"delay_{name}_s"], float(value), rtol=1e-9, err_msg=f"{e.name} {name}")


def test_matrix_rejects_a_scalar_grid():
    with pytest.raises(BackboneError, match="tau_c_ns must be a non-empty 1-D array"):
        plan_matrix(tau_c_ns=15.0, field_mhz=_FIELDS)


def test_matrix_rejects_no_labeling():
    with pytest.raises(BackboneError, match="at least one labeling"):
        plan_matrix(tau_c_ns=_TAU_C, field_mhz=_FIELDS, labelings=[])
