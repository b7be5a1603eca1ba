"""The MoM solve itself: mixed-precision LU with one refinement step (error bound), the BLAS
thread limit the solver sets for itself, and sweeps with and without worker threads."""

from __future__ import annotations

import numpy as np
import pytest
from threadpoolctl import threadpool_info, threadpool_limits

from footgen.physics import mom
from footgen.physics.mom import MomSolver, solve_refined
from footgen.physics.wires import MeshControl, ifa_wire_model

from test_predict import demo_ifa as board_ifa  # the invented demo board (not a vendor design)


@pytest.fixture(scope="module")
def solvers() -> dict[str, MomSolver]:
    ifa = board_ifa()
    fine = MeshControl(3.2e9, grid_pitch_per_wavelength=20.0)  # ~1000 unknowns
    return {"board": MomSolver(ifa_wire_model(ifa, 3.2e9)), "fine": MomSolver(ifa_wire_model(ifa, 3.2e9, control=fine))}


@pytest.mark.parametrize("name", ["board", "fine"])
@pytest.mark.parametrize("freq_hz", [1.8e9, 2.45e9, 3.2e9])
def test_mixed_precision_zin_stays_within_its_bound(solvers, name: str, freq_hz: float, monkeypatch) -> None:
    solver = solvers[name]
    assert solver.n_unknowns >= mom.MIXED_PRECISION_MIN_UNKNOWNS
    z = solver.impedance_matrix(freq_hz)
    v = solver._v.astype(complex)
    exact = 1.0 / (v @ np.linalg.solve(z, v))
    calls = []
    real_getrf = mom.lapack.cgetrf
    monkeypatch.setattr(mom.lapack, "cgetrf", lambda *a, **k: calls.append(1) or real_getrf(*a, **k))
    mixed = 1.0 / (v @ solve_refined(z.copy(), v))
    assert calls, "the single-precision LU was not used"
    # the bound the solver enforces (first-order Zin error estimate) holds for the true error
    assert abs(mixed / exact - 1.0) <= mom.MIXED_ZIN_RTOL
    # and the refinement step is what makes it hold: single precision alone is far worse
    lu, piv, _ = real_getrf(z.astype(np.complex64))
    single = 1.0 / (v @ mom.lapack.cgetrs(lu, piv, v.astype(np.complex64))[0].astype(complex))
    assert abs(mixed / exact - 1.0) < 0.01 * abs(single / exact - 1.0)


def test_ill_conditioned_matrix_falls_back_to_double_precision() -> None:
    n = mom.MIXED_PRECISION_MIN_UNKNOWNS
    rng = np.random.default_rng(7)
    q, _ = np.linalg.qr(rng.standard_normal((n, n)))
    z = (q * np.geomspace(1.0, 1e-11, n)) @ q.T + 0j  # symmetric, condition number 1e11
    v = rng.standard_normal(n) + 0j
    assert np.array_equal(solve_refined(z.copy(), v), np.linalg.solve(z, v))


def test_solver_limits_blas_threads_whatever_the_caller_set(solvers, monkeypatch) -> None:
    seen = []
    real_solve = MomSolver._solve

    def spy(self, z):
        seen.append([lib["num_threads"] for lib in threadpool_info() if lib["user_api"] == "blas"])
        return real_solve(self, z)

    monkeypatch.setattr(MomSolver, "_solve", spy)
    with threadpool_limits(limits=2, user_api="blas"):
        solvers["board"].sweep_direct(np.array([2.4e9]), workers=0)
        solvers["board"].currents(2.5e9)
        solvers["board"].sweep_interpolated(np.linspace(2.3e9, 2.5e9, 5), workers=2)
    assert len(seen) == 7 and all(threads and all(t == mom.BLAS_THREADS for t in threads) for threads in seen)


def test_mixed_precision_sweep_agrees_with_the_double_one(solvers) -> None:
    freqs = np.linspace(2.0e9, 2.9e9, 9)
    double = solvers["board"].sweep_interpolated(freqs)
    mixed = MomSolver(solvers["board"].model, mixed_precision=True).sweep_interpolated(freqs)
    assert not np.array_equal(mixed, double)  # the other solve did run
    assert np.max(np.abs(mixed / double - 1.0)) <= mom.MIXED_ZIN_RTOL


def test_sweeps_give_the_same_zin_with_and_without_worker_threads(solvers) -> None:
    freqs = np.linspace(2.2e9, 2.7e9, 9)
    s = solvers["board"]
    assert np.array_equal(s.sweep_direct(freqs[:3], workers=0), s.sweep_direct(freqs[:3], workers=2))
    assert np.array_equal(s.sweep_interpolated(freqs, workers=0), s.sweep_interpolated(freqs, workers=2))
