"""Benchmark: our thin-wire MoM against nec2++ (PyNEC) on the same wire models, plus a 201-point
board-level sweep.

Per model (a free-space wire IFA over a wire-grid ground, ~200 / 400 / 800 unknowns) both codes
solve the same frequency list; seconds per frequency include each code's geometry set-up spread
over the list; f_res = min |S11| (50 ohm) on that list.  Each timing is the best of REPEATS runs
(the machine is shared).  BLAS is limited to one thread (nec2++ is single-threaded).  Columns
"ours" use our default direct sweep, which also uses the machine's second core (solves in worker
threads while the main thread fills the next matrix).  For the ~800-segment model both codes are
also timed fairly both ways (one core: CPU time of the process; two cores: wall time) with our
mixed-precision solve (as dense prediction sweeps use it):
one core each (ours with no worker thread) and two cores each (nec2++ in two processes, each
solving half the frequency list); ours with double-precision solves on one core is printed too.  Unknowns: ours = triangle
basis functions (junctions add some), nec2++ = segments.

Usage: python benchmarks/solver_vs_nec2.py
Last line: speedup_800=<ours 2 threads vs nec2++ 1 core> sweep201_s=<s> synth_solve_ms=<ms>
           speedup_800_1core=<x> speedup_800_2core=<x> load_avg=<1-min load average>
"""

from __future__ import annotations

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import concurrent.futures  # noqa: E402
import dataclasses  # noqa: E402
import multiprocessing  # noqa: E402
import functools  # noqa: E402
import importlib.util  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

from footgen.physics.ifa import GroundPlane, Laminate, PrintedIfa  # noqa: E402
from footgen.physics.mom import MomSolver, Wire, WireModel, blas_threads_limited, solve_refined  # noqa: E402
from footgen.physics.predict import min_s11_frequency_hz, s11_from_zin, zin_ohm  # noqa: E402
from footgen.physics.wires import MeshControl, ifa_wire_model  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
RUNNER_PATH = ROOT / "tests" / "data" / "mom" / "nec2_wire_runner.py"
MM = 1e-3
TARGET_UNKNOWNS = (200, 400, 800)
BENCH_FREQS_HZ = np.linspace(1.95e9, 2.30e9, 8)
F_MAX_HZ = 2.4e9
UNIFORM_RADIUS_M = 0.01 * MM
REPEATS = 3
SWEEP_POINTS = 201
SWEEP_BAND_HZ = (1.8e9, 3.2e9)
SYNTH_MESH_FACTOR = 1.2  # footgen.sizing meshes its single-frequency solves for 1.2 f0
SYNTH_REPEATS = 10


@functools.lru_cache(maxsize=1)
def _runner():
    spec = importlib.util.spec_from_file_location("nec2_wire_runner", RUNNER_PATH)
    module = importlib.util.module_from_spec(spec)
    sys.dont_write_bytecode = True  # keep tests/data free of __pycache__
    spec.loader.exec_module(module)
    return module


def board_ifa() -> PrintedIfa:
    """Invented board-level demo: IFA on 1.6 mm FR-4 over a 36 mm x 40 mm ground."""
    return PrintedIfa(
        arm_path_m=((-13 * MM, 5 * MM), (7 * MM, 5 * MM)),
        feed_x_m=-9.5 * MM,
        short_x_m=-13 * MM,
        trace_width_m=0.8 * MM,
        short_width_m=0.8 * MM,
        port_gap_m=0.6 * MM,
        ground=GroundPlane(x_min_m=-18 * MM, x_max_m=18 * MM, length_m=40 * MM),
        laminate=Laminate(eps_r=4.3, thickness_m=1.6 * MM, loss_tangent=0.02),
    )


def model_with_unknowns(target: int) -> WireModel:
    """Scale all segmentation densities until the segment count is near ``target``."""
    lo, hi = 0.2, 8.0
    best = None
    for _ in range(30):
        scale = (lo * hi) ** 0.5
        control = MeshControl(F_MAX_HZ, segments_per_wavelength=40.0 * scale, detail_segments=4.0 * scale,
                              grid_pitch_per_wavelength=10.0 * scale, grid_segments_per_wavelength=20.0 * scale)
        model = ifa_wire_model(_runner().comparison_ifa(), F_MAX_HZ, with_laminate=False, with_loss=False, control=control)
        if best is None or abs(model.n_segments - target) < abs(best.n_segments - target):
            best = model
        if model.n_segments < target:
            lo = scale
        else:
            hi = scale
        if abs(model.n_segments - target) <= 0.02 * target:
            break
    wires = tuple(Wire(w.start_m, w.end_m, w.n_segments, UNIFORM_RADIUS_M) for w in best.wires)
    return dataclasses.replace(best, wires=wires, source_wire=1, source_segment=0)


def best_time(fn, repeats: int = REPEATS, clock=time.perf_counter):
    best, out = float("inf"), None
    for _ in range(repeats):
        t0 = clock()
        out = fn()
        best = min(best, clock() - t0)
    return best, out


def best_cpu_time(fn, repeats: int = REPEATS):
    """Like :func:`best_time` but CPU seconds of this process: for one-core runs on a shared
    machine, where wall time mostly measures the other users."""
    return best_time(fn, repeats, clock=time.process_time)


def _nec2_half(args: tuple[WireModel, np.ndarray]) -> np.ndarray:
    model, freqs = args
    return _runner().nec2_zin_ohm(model, freqs)


def nec2_two_processes(pool: concurrent.futures.Executor, model: WireModel, freqs: np.ndarray) -> np.ndarray:
    """nec2++ on two cores: two processes, each solving half of ``freqs``."""
    halves = np.array_split(np.asarray(freqs, float), 2)
    return np.concatenate(list(pool.map(_nec2_half, [(model, h) for h in halves])))


def fill_and_lu(model: WireModel, freqs: np.ndarray, t_nec1_per_f: float) -> str:
    """One core, CPU time per frequency: our fill, our LU (mixed and double precision), against
    nec2++'s whole solve; and the speed-up a free fill would leave (nec2++ / our LU alone)."""
    solver = MomSolver(model, mixed_precision=True)
    f_mid = float(np.median(freqs))
    with blas_threads_limited():
        t_fill, z = best_cpu_time(lambda: solver.impedance_matrix(f_mid))
        v = solver._v.astype(complex)
        t_mixed, _ = best_cpu_time(lambda: solve_refined(z.copy(), v))
        t_double, _ = best_cpu_time(lambda: np.linalg.solve(z, v))
    return (f"# one core, CPU ms per frequency at {solver.n_unknowns} unknowns: fill {t_fill * 1e3:.1f}, LU + refinement "
            f"(complex64) {t_mixed * 1e3:.1f}, double LU {t_double * 1e3:.1f}; nec2++ whole solve {t_nec1_per_f * 1e3:.1f}; "
            f"with a free fill the speed-up could reach {t_nec1_per_f / t_mixed:.2f}x (mixed) / {t_nec1_per_f / t_double:.2f}x (double); "
            f"4x needs fill + LU <= {t_nec1_per_f / 4 * 1e3:.1f} ms")


def fair_comparison(model: WireModel, freqs: np.ndarray) -> tuple[float, float, str]:
    """(one core each, two cores each) speed-ups of ours over nec2++ and a report line."""
    runner = _runner()
    n_f = freqs.shape[0]
    t_double1, _ = best_cpu_time(lambda: MomSolver(model).sweep_direct(freqs, workers=0))
    t_ours1, z1 = best_cpu_time(lambda: MomSolver(model, mixed_precision=True).sweep_direct(freqs, workers=0))
    t_nec1, zn = best_cpu_time(lambda: runner.nec2_zin_ohm(model, freqs))
    t_ours2, _ = best_time(lambda: MomSolver(model, mixed_precision=True).sweep_direct(freqs, workers=2))
    ctx = multiprocessing.get_context("fork")
    with concurrent.futures.ProcessPoolExecutor(max_workers=2, mp_context=ctx) as pool:
        nec2_two_processes(pool, model, freqs[:2])  # start both processes before timing
        t_nec2, zn2 = best_time(lambda: nec2_two_processes(pool, model, freqs))
    if not np.allclose(zn, zn2, rtol=1e-9):
        raise RuntimeError("nec2++ in two processes disagrees with one process")
    dz = float(np.max(np.abs(z1 / zn - 1.0)))
    line = (f"# same geometry, {model.n_segments} segments: ours {MomSolver(model).n_unknowns} unknowns, nec2++ "
            f"{model.n_segments} unknowns; CPU s per frequency, one core each: ours {t_ours1 / n_f:.4f}, nec2++ "
            f"{t_nec1 / n_f:.4f} ({t_nec1 / t_ours1:.2f}x); wall s per frequency, two cores each: ours {t_ours2 / n_f:.4f}, nec2++ "
            f"{t_nec2 / n_f:.4f} ({t_nec2 / t_ours2:.2f}x); ours with double-precision solves on one core (CPU) "
            f"{t_double1 / n_f:.4f} ({t_nec1 / t_double1:.2f}x); max |Zin ours / Zin nec2++ - 1| = {dz:.3f}")
    return t_nec1 / t_ours1, t_nec2 / t_ours2, line + "\n" + fill_and_lu(model, freqs, t_nec1 / n_f)


def main() -> int:
    runner = _runner()
    freqs = BENCH_FREQS_HZ
    n_f = freqs.shape[0]
    speedups = {}
    extra = ""
    print(f"# BLAS threads: OPENBLAS_NUM_THREADS={os.environ['OPENBLAS_NUM_THREADS']}; {n_f} frequencies per model")
    print("# target  segments  our_unknowns  ours_s_per_f  nec2_s_per_f  ratio  f_res_ours_GHz  f_res_nec2_GHz  df_rel")
    for target in TARGET_UNKNOWNS:
        model = model_with_unknowns(target)
        t_ours, z_ours = best_time(lambda: MomSolver(model).sweep_direct(freqs))
        t_nec, z_nec = best_time(lambda: runner.nec2_zin_ohm(model, freqs))
        n_unk = MomSolver(model).n_unknowns
        f_ours = min_s11_frequency_hz(freqs, s11_from_zin(z_ours))
        f_nec = min_s11_frequency_hz(freqs, s11_from_zin(z_nec))
        ratio = (t_nec / n_f) / (t_ours / n_f)
        speedups[target] = ratio
        if target == TARGET_UNKNOWNS[-1]:
            speedup_1core, speedup_2core, fair_line = fair_comparison(model, freqs)
            t_int, z_int = best_time(lambda: MomSolver(model).sweep_interpolated(freqs))
            f_int = min_s11_frequency_hz(freqs, s11_from_zin(z_int))
            extra = (f"# {target}: ours with matrix interpolation {t_int / n_f:.4f} s per frequency "
                     f"(ratio {t_nec / t_int:.2f} vs nec2++), f_res {f_int / 1e9:.4f} GHz")
        print(f"{target:7d}  {model.n_segments:8d}  {n_unk:12d}  {t_ours / n_f:12.4f}  {t_nec / n_f:12.4f}  "
              f"{ratio:5.2f}  {f_ours / 1e9:14.4f}  {f_nec / 1e9:14.4f}  {f_ours / f_nec - 1.0:+.4f}", flush=True)
    print(extra)
    print(fair_line)
    sweep = np.linspace(*SWEEP_BAND_HZ, SWEEP_POINTS)
    board = board_ifa()
    n_board = MomSolver(ifa_wire_model(board, float(sweep.max()))).n_unknowns
    t_sweep, z_board = best_time(lambda: zin_ohm(board, sweep))
    f_board = min_s11_frequency_hz(sweep, s11_from_zin(z_board))
    print(f"# board-level model (IFA + ground grid + FR-4 slab): {n_board} unknowns, {SWEEP_POINTS}-point "
          f"sweep {t_sweep:.3f} s (interpolated), f_res {f_board / 1e9:.4f} GHz")
    f_synth = float(np.mean(SWEEP_BAND_HZ))
    # synthesis-style call (as footgen.sizing makes ~40-80 per build): a new wire model and solver
    # set-up for every single-frequency solve
    t_synth, _ = best_time(lambda: MomSolver(ifa_wire_model(board, SYNTH_MESH_FACTOR * f_synth)).sweep_direct([f_synth]),
                           SYNTH_REPEATS)
    print(f"# synthesis-style single-frequency solve incl. model and set-up (board model): {t_synth * 1e3:.1f} ms")
    print(f"# targets: speedup_800_1core >= 4 (one core each, same geometry); load average {os.getloadavg()[0]:.2f}")
    print(f"speedup_800={speedups[800]:.2f} sweep201_s={t_sweep:.3f} synth_solve_ms={t_synth * 1e3:.1f} "
          f"speedup_800_1core={speedup_1core:.2f} speedup_800_2core={speedup_2core:.2f} load_avg={os.getloadavg()[0]:.2f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
