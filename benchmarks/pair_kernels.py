"""Paired timing of two versions of the compiled path loop (engine/fitting/gram_kernel.py).

Separate runs of the same path spread by 20-50% on a shared machine, from process to process
even more, so a kernel change is judged here by alternating the old and the new loop in one
process on the same problems and taking the median of the paired time ratios. Problems: the
benchmark's simulated data (benchmarks/bench_shrinkage.py), the path on all rows and on the
training rows of the first of its ten folds, one BLAS thread, the default 100-penalty grid
down to 1e-3 of lambda_max. Also printed: the loop's counters (last conjugate-gradient
steps, all of them, refactorings, exact tries, descents), the largest coefficient difference
between the two versions and the largest scale-free KKT violation of each.

    git show HEAD:engine/fitting/gram_kernel.py > /tmp/old_kernel.py   # or --old-rev HEAD
    python benchmarks/pair_kernels.py --old /tmp/old_kernel.py --mix 0.5,1 --reps 21

Do not run tests or other benchmarks meanwhile. Each version's machine code is cached next
to its copy (a new copy compiles once, 15-60 s).
"""

from __future__ import annotations

import argparse
import hashlib
import importlib.util
import os
import subprocess
import sys
import tempfile
import time

sys.path.insert(0, os.path.join(os.path.dirname(__file__), ".."))
sys.path.insert(0, os.path.dirname(__file__))
# the engine first, as in the app: its BLAS thread setting applies only before numpy loads
import engine  # noqa: E402, F401, I001

import numpy as np  # noqa: E402
from threadpoolctl import threadpool_limits  # noqa: E402

from bench_shrinkage import simulate  # noqa: E402
from engine.context import tune_own_process  # noqa: E402
from engine.fitting import coordinate  # noqa: E402
from engine.tuning.folds import make_folds  # noqa: E402

ROOT = os.path.abspath(os.path.join(os.path.dirname(__file__), ".."))
KERNEL = os.path.join(ROOT, "engine", "fitting", "gram_kernel.py")


def kernel_copy(text: str, label: str) -> str:
    """A stable file holding ``text`` (numba caches by file, so an unchanged copy is reused)."""
    digest = hashlib.sha256(text.encode()).hexdigest()[:12]
    folder = os.path.join(tempfile.gettempdir(), "tamis-pair-kernels")
    os.makedirs(folder, exist_ok=True)
    path = os.path.join(folder, f"gram_kernel_{label}_{digest}.py")
    if not os.path.exists(path):
        with open(path, "w") as f:
            f.write(text)
    return path


def load(path: str, name: str):
    spec = importlib.util.spec_from_file_location(name, path)
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    sys.modules[name] = module  # numba's cache looks the module up by name
    spec.loader.exec_module(module)
    return module


def problems(shape: str, mix: float, seed: int):
    n, p = (int(v) for v in shape.lower().split("x"))
    X, y = simulate(n, p, seed=seed)
    train = make_folds(n, "kfold", folds=10, seed=seed)[0][0]
    out = []
    for label, rows in (("all rows", None), ("training part 1", np.sort(train))):
        prob, _ = coordinate.build_problem(
            X if rows is None else X[rows], y if rows is None else y[rows]
        )
        v = np.ones(p)
        lam_max = coordinate._lambda_max_of(prob.q, prob.n, mix, v)
        out.append((label, prob, coordinate.penalty_grid(lam_max, 100, 1e-3), v))
    return out


def timed_path(kernel, prob, lam, mix, v):
    coordinate.gram_kernel = kernel
    coordinate._LAST_COUNTERS = None
    t = time.perf_counter()
    res = coordinate.solve_path(prob, lam, mix, v)
    elapsed = time.perf_counter() - t
    if coordinate._LAST_COUNTERS is None:  # the compiled loop gave up: timing the fallback
        sys.exit(f"{kernel.__name__}: the compiled loop did not finish this path")
    return elapsed, res, coordinate._LAST_COUNTERS.copy()


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--old", help="file with the old gram_kernel.py")
    ap.add_argument("--old-rev", default="HEAD", help="git revision of the old loop (no --old)")
    ap.add_argument("--new", default=KERNEL, help="file with the new loop (the working tree's)")
    ap.add_argument("--shapes", default="1000x500")
    ap.add_argument("--mix", default="0.5,1")
    ap.add_argument("--reps", type=int, default=21)
    ap.add_argument("--seed", type=int, default=0)
    args = ap.parse_args(argv)
    tune_own_process()
    if args.old:
        old_text = open(args.old).read()
    else:
        old_text = subprocess.run(
            ["git", "show", f"{args.old_rev}:engine/fitting/gram_kernel.py"],
            cwd=ROOT, check=True, capture_output=True, text=True,
        ).stdout  # fmt: skip
    old = load(kernel_copy(old_text, "old"), "tamis_pair_old_kernel")
    new = load(kernel_copy(open(args.new).read(), "new"), "tamis_pair_new_kernel")
    if not (old.AVAILABLE and new.AVAILABLE):
        sys.exit("numba is not available here: there is no compiled loop to compare")
    with threadpool_limits(1):
        for shape in args.shapes.split(","):
            for mix in (float(m) for m in args.mix.split(",")):
                for label, prob, lam, v in problems(shape, mix, args.seed):
                    for kernel in (old, new):  # load or compile, outside the timing
                        timed_path(kernel, prob, lam, mix, v)
                    times: dict[int, list[float]] = {id(old): [], id(new): []}
                    last = {}
                    for r in range(args.reps):  # alternate which goes first
                        for kernel in (old, new) if r % 2 == 0 else (new, old):
                            t, res, counters = timed_path(kernel, prob, lam, mix, v)
                            times[id(kernel)].append(t)
                            last[id(kernel)] = (res, counters)
                    t_old, t_new = np.array(times[id(old)]), np.array(times[id(new)])
                    ratios = t_new / t_old
                    (r_old, c_old), (r_new, c_new) = last[id(old)], last[id(new)]
                    diff = np.abs(r_old.std_coefs - r_new.std_coefs).max()
                    q1, q3 = np.percentile(ratios, [25, 75])
                    print(
                        f"{shape} mix {mix:g} {label}: old {1e3 * np.median(t_old):.1f} ms, "
                        f"new {1e3 * np.median(t_new):.1f} ms, paired ratio new/old "
                        f"{np.median(ratios):.3f} (quartiles {q1:.3f}-{q3:.3f})\n"
                        f"    counters [cg last, cg all, refactorings, tries, descents] old "
                        f"{c_old[1:].tolist()} new {c_new[1:].tolist()}; largest coefficient "
                        f"difference {diff:.1e}; KKT old {r_old.kkt.max():.1e} new "
                        f"{r_new.kkt.max():.1e}",
                        flush=True,
                    )


if __name__ == "__main__":
    main()
