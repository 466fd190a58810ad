"""Speed of Tamis's penalized paths with cross-validation against scikit-learn (not a test).

For each shape (rows x columns) the same simulated data with a sparse truth (10 true columns,
signal-to-noise about 3), the same 10 folds and the same 100-penalty grid go to both sides:

  lasso  Tamis fit_and_validate, elastic_net_path  vs  sklearn LassoCV
  enet   the same with mix = 0.5                  vs  sklearn ElasticNetCV(l1_ratio=0.5)
  ridge  Tamis fit_and_validate, ridge_path       vs  sklearn RidgeCV(cv=10)

scikit-learn gets the data standardized once (its estimators do not rescale), so both solve
the same objective with alpha = lambda (Ridge: alpha = n_train * lambda). Its tolerance is
the loosest of --ref-tols whose largest KKT violation on the full-data path is no worse than
ours (else the tightest tried), measured with the same scale-free function
(engine.fitting.coordinate.kkt_violation). The reference time is the best of n_jobs 1 and 2;
Tamis's and the X'X product's the best of --repeat runs (3), so that the ratio to X'X
compares like with like (single runs here spread by 20-30%).
RidgeCV refits per penalty and fold; on large shapes it is timed on --ridge-alphas penalties
and scaled linearly to 100 (marked "extrapolated").

Prints one table row per shape and method: seconds, ratio Tamis / reference, largest KKT
violation of each, for n > p the ratio to one Gram product X'X, and the peak traced memory
of the Tamis run relative to the data matrix. --json writes the rows for docs/benchmarks.md.

    python benchmarks/bench_shrinkage.py --quick
    python benchmarks/bench_shrinkage.py --shapes 20000x1000,100000x100 --methods lasso
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import sys
import time
import tracemalloc
import warnings

sys.path.insert(0, os.path.join(os.path.dirname(__file__), ".."))
# the engine first, as in the app: its BLAS thread setting applies only before numpy loads
import engine  # noqa: E402, F401, I001

import numpy as np  # noqa: E402

from engine.fitting.coordinate import (  # noqa: E402
    elastic_net_path,
    kkt_violation,
    warm_compiled_path,
)
from engine.fitting.ridge import ridge_path  # noqa: E402
from engine.tuning.crossval import fit_and_validate, shared_cross_products  # noqa: E402
from engine.tuning.folds import make_folds  # noqa: E402
from engine.tuning.parts import warm_process_pool  # noqa: E402

ALL_SHAPES = ["100x10000", "200x2000", "1000x500", "5000x200", "20000x1000", "100000x100"]
QUICK_SHAPES = ["100x2000", "500x200", "2000x100"]


def simulate(n: int, p: int, seed: int = 0):
    """Correlated columns (AR(1) rho = 0.5 along the column order), 10 true coefficients."""
    rng = np.random.default_rng(seed)
    X = rng.standard_normal((n, p))
    X[:, 1:] = 0.5 * X[:, :-1] + np.sqrt(0.75) * X[:, 1:]  # neighbour correlation ~0.5
    X = X * rng.uniform(0.5, 3.0, p) + rng.normal(0, 5, p)
    k = min(10, p)
    b = np.zeros(p)
    idx = rng.choice(p, k, replace=False)
    b[idx] = rng.choice([-1, 1], k) * rng.uniform(0.5, 2.0, k) / X.std(0)[idx]
    signal = X @ b
    y = signal + rng.standard_normal(n) * signal.std() / 3.0 + 10.0
    return X, y


def timed(fn, *fargs, repeat: int = 1):
    best, out = np.inf, None
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn(*fargs)
        best = min(best, time.perf_counter() - t)
    return best, out


def tamis_run(X, y, parts, mix, lam, workers, parallel="auto"):
    """What a study does: cross products once (n > p), the path on all rows beside the
    validation parts."""
    diag: dict = {}
    shared = shared_cross_products(X, y, parts)
    if mix == 0:

        def fit_all(progress):
            return ridge_path(X, y, penalties=lam, progress=progress)

    else:

        def fit_all(progress):
            return elastic_net_path(X, y, mix=mix, penalties=lam, shared=shared, progress=progress)

    path, _ = fit_and_validate(
        fit_all, X, y, parts, mix, lam, workers=workers, diagnostics=diag, parallel=parallel,
        shared=shared,
    )  # fmt: skip
    return max(path.max_kkt_violation or 0.0, diag.get("max_kkt_violation", 0.0))


# the issue's memory target: peak at most 3x the data matrix plus a fixed base; the base here
# covers the fixed-size working blocks (4 MB each) and small per-part arrays
MEMORY_BASE_MB = 32.0


def peak_memory(X, y, parts, mix, lam, workers, parallel):
    """Peak traced bytes of the Tamis run (the data matrix itself excluded: it exists before)."""
    tracemalloc.start()
    tracemalloc.reset_peak()
    tamis_run(X, y, parts, mix, lam, workers, parallel)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return peak


def calibrate_tol(Z, yc, lam, mix, ours_kkt, tols):
    from sklearn.linear_model import enet_path

    n, p = Z.shape
    chosen, kkt = tols[-1], np.inf
    for tol in tols:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            _, coefs, _ = enet_path(
                Z, yc, l1_ratio=mix, alphas=lam, tol=tol, max_iter=100_000, precompute=n > p
            )
        kkt = float(kkt_violation(Z, yc, coefs.T, lam, mix).max())
        if kkt <= ours_kkt:
            return tol, kkt
        chosen = tol
    return chosen, kkt


def reference_cv(Z, y, parts, mix, lam, tol, n_jobs):
    from sklearn.linear_model import ElasticNetCV, LassoCV

    cv = [(tr, te) for tr, te in parts]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        if mix == 1:
            est = LassoCV(alphas=lam, cv=cv, tol=tol, max_iter=100_000, n_jobs=n_jobs)
        else:
            est = ElasticNetCV(
                l1_ratio=mix, alphas=lam, cv=cv, tol=tol, max_iter=100_000, n_jobs=n_jobs
            )
        return est.fit(Z, y)


def reference_ridge(Z, y, parts, lam, n_alphas):
    from sklearn.linear_model import RidgeCV

    n_train = int(np.mean([tr.size for tr, _ in parts]))
    alphas = n_train * lam
    pick = np.unique(np.linspace(0, lam.size - 1, n_alphas).round().astype(int))
    cv = [(tr, te) for tr, te in parts]
    t, _ = timed(RidgeCV(alphas=alphas[pick], cv=cv).fit, Z, y)
    return t * lam.size / pick.size, pick.size < lam.size


def run_shape(shape, methods, args):
    n, p = (int(v) for v in shape.lower().split("x"))
    X, y = simulate(n, p, seed=args.seed)
    parts = make_folds(n, "kfold", folds=10, seed=args.seed)
    Z = (X - X.mean(0)) / X.std(0)
    yc = y - y.mean()
    rows = []
    gram_t = None
    if n > p:
        gram_t, _ = timed(np.dot, X.T, X, repeat=args.repeat)
    for method in methods:
        mix = {"lasso": 1.0, "enet": 0.5, "ridge": 0.0}[method]
        if mix == 0:
            lam = ridge_path(X, y, n_penalties=100).penalties
        else:
            lam = elastic_net_path(X, y, mix=mix, penalties=None, n_penalties=2).penalties
            lam = np.geomspace(lam[0], lam[-1], 100)
        # the workers stay warm in a session (the desktop starts them at launch and keeps them
        # for 30 idle minutes); make sure they are, outside the timing
        warm_process_pool(args.workers, wait=True)
        t_ours, kkt_ours = timed(
            tamis_run, X, y, parts, mix, lam, args.workers, args.parallel, repeat=args.repeat
        )
        row = {
            "shape": shape,
            "method": method,
            "tamis_s": t_ours,
            "tamis_kkt": kkt_ours,
            "gram_s": gram_t,
            "ratio_to_gram": (t_ours / gram_t) if gram_t else None,
        }
        if mix == 0:
            n_alphas = lam.size if n * p <= args.ridge_full_limit else args.ridge_alphas
            t_ref, extrap = reference_ridge(Z, y, parts, lam, n_alphas)
            row.update(
                ref="RidgeCV(cv=10)",
                ref_s=t_ref,
                ref_extrapolated=extrap,
                ref_tol=None,
                ref_kkt=None,
                ref_default_s=None,
            )
        else:
            tol, kkt_ref = calibrate_tol(Z, yc, lam, mix, kkt_ours, args.ref_tols)
            best = np.inf
            for jobs in (1, 2):
                t, _ = timed(reference_cv, Z, y, parts, mix, lam, tol, jobs)
                best = min(best, t)
            t_def = np.inf
            if not args.skip_default:
                for jobs in (1, 2):
                    t, _ = timed(reference_cv, Z, y, parts, mix, lam, 1e-4, jobs)
                    t_def = min(t_def, t)
            row.update(
                ref="LassoCV" if mix == 1 else "ElasticNetCV(0.5)",
                ref_s=best,
                ref_tol=tol,
                ref_kkt=kkt_ref,
                ref_extrapolated=False,
                ref_default_s=None if args.skip_default else t_def,
            )
        row["ratio"] = row["tamis_s"] / row["ref_s"]
        if args.memory:
            # traced in this process: with the parts on threads every array is seen (worker
            # processes would hide theirs; each holds one part's problem at a time)
            peak = peak_memory(X, y, parts, mix, lam, args.workers, "threads")
            row["peak_mem_x_data"] = peak / X.nbytes
            row["peak_mem_mb"] = peak / 1e6
            row["memory_ok"] = peak / 1e6 <= 3 * X.nbytes / 1e6 + MEMORY_BASE_MB
        rows.append(row)
        print_row(row)
        sys.stdout.flush()
    return rows


def fmt(x, spec=".3g"):
    return "-" if x is None else format(x, spec)


def print_row(r):
    print(
        f"{r['shape']:>11} {r['method']:>5} | tamis {r['tamis_s']:8.3f}s kkt {fmt(r['tamis_kkt'], '.1e')}"
        f" | {r['ref']} {r['ref_s']:8.3f}s{'*' if r['ref_extrapolated'] else ' '}"
        f" tol {fmt(r['ref_tol'], '.0e')} kkt {fmt(r['ref_kkt'], '.1e')}"
        f" | ratio {r['ratio']:.3f}"
        f" | vs default-tol ref {fmt(r['ref_default_s'] and r['tamis_s'] / r['ref_default_s'])}"
        f" | /gram {fmt(r['ratio_to_gram'], '.1f')}"
        f" | mem {fmt(r.get('peak_mem_x_data'), '.2f')}x"
        f" ({fmt(r.get('peak_mem_mb'), '.0f')} MB, within 3x data + {MEMORY_BASE_MB:.0f} MB:"
        f" {r.get('memory_ok', '-')})"
    )


def render(path: str) -> str:
    """Markdown table of the rows stored with --json (the last row per shape and method)."""
    rows: dict = {}
    for line in open(path):
        r = json.loads(line)
        rows[(r["shape"], r["method"])] = r
    out = [
        "| shape (rows x cols) | method | Tamis s | reference | ref s | ratio | ratio vs ref at tol 1e-4 "
        "| KKT Tamis | KKT ref (tol) | Tamis / one X'X | peak memory / data (MB) |",
        "|---|---|---|---|---|---|---|---|---|---|---|",
    ]
    for (shape, method), r in rows.items():
        ref_kkt = "-" if r["ref_kkt"] is None else f"{r['ref_kkt']:.1e} ({r['ref_tol']:.0e})"
        dflt = r["ref_default_s"] and r["tamis_s"] / r["ref_default_s"]
        star = " (extrapolated)" if r["ref_extrapolated"] else ""
        out.append(
            f"| {shape} | {method} | {r['tamis_s']:.2f} | {r['ref']} | {r['ref_s']:.2f}{star} "
            f"| {r['ratio']:.3f} | {fmt(dflt)} | {r['tamis_kkt']:.1e} | {ref_kkt} "
            f"| {fmt(r['ratio_to_gram'], '.1f')} | {fmt(r.get('peak_mem_x_data'), '.2f')}"
            f" ({fmt(r.get('peak_mem_mb'), '.0f')}) |"
        )
    return "\n".join(out)


def versions():
    import joblib
    import scipy
    import sklearn
    import threadpoolctl

    blas = threadpoolctl.threadpool_info()
    try:
        import subprocess

        commit = subprocess.run(
            ["git", "rev-parse", "--short", "HEAD"],
            capture_output=True,
            text=True,
            cwd=os.path.dirname(os.path.abspath(__file__)),
        ).stdout.strip()
    except OSError:
        commit = ""
    return {
        "commit": commit,
        "python": platform.python_version(),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "scikit-learn": sklearn.__version__,
        "joblib": joblib.__version__,
        "blas": sorted({f"{b['internal_api']} {b.get('version')}" for b in blas}),
        "machine": f"{platform.machine()} {platform.processor() or ''}".strip(),
        "cores": os.cpu_count(),
    }


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--shapes", help="comma-separated RxC list (default: the six target shapes)")
    ap.add_argument("--quick", action="store_true", help="three small shapes, a few seconds each")
    ap.add_argument("--methods", default="lasso,enet,ridge")
    ap.add_argument(
        "--workers", type=int, default=None, help="Tamis parallel parts (default: cores)"
    )
    ap.add_argument(
        "--parallel",
        default="auto",
        choices=["auto", "threads", "processes"],
        help="where Tamis runs its validation parts (default: its own choice)",
    )
    ap.add_argument("--ref-tols", default="1e-4,1e-6,1e-8")
    ap.add_argument(
        "--ridge-alphas",
        type=int,
        default=10,
        help="penalties RidgeCV is timed on for large shapes (scaled to 100)",
    )
    ap.add_argument(
        "--ridge-full-limit",
        type=float,
        default=2e6,
        help="rows*cols up to which RidgeCV runs all 100 penalties",
    )
    ap.add_argument(
        "--skip-default",
        action="store_true",
        help="do not also time the reference at its default tolerance 1e-4",
    )
    ap.add_argument(
        "--repeat",
        type=int,
        default=3,
        help="Tamis and the X'X product are each timed this many times, best kept (default 3)",
    )
    ap.add_argument("--memory", action="store_true", help="also measure peak traced memory")
    ap.add_argument("--seed", type=int, default=0)
    ap.add_argument("--json", help="append result rows to this JSON-lines file")
    ap.add_argument("--render", help="print a markdown table of a --json file and stop")
    args = ap.parse_args(argv)
    from engine.context import tune_own_process

    tune_own_process()  # as the command line does for a fit
    if args.render:
        print(render(args.render))
        return
    args.ref_tols = [float(t) for t in args.ref_tols.split(",")]
    shapes = QUICK_SHAPES if args.quick else ALL_SHAPES
    if args.shapes:
        shapes = args.shapes.split(",")
    methods = args.methods.split(",")
    info = versions()
    # the worker processes start once per session (the desktop starts them at launch); their
    # start-up is reported here and not charged to each shape
    t0 = time.perf_counter()
    warm_process_pool(args.workers, wait=True)
    info["worker_start_s"] = round(time.perf_counter() - t0, 2)
    # likewise the compiled path loop is loaded once per session (the window does it at launch)
    t0 = time.perf_counter()
    warm_compiled_path()
    info["compiled_loop_load_s"] = round(time.perf_counter() - t0, 2)
    print(json.dumps(info))
    for shape in shapes:
        rows = run_shape(shape, methods, args)
        if args.json:
            with open(args.json, "a") as fh:
                for r in rows:
                    fh.write(json.dumps({**r, "versions": info}) + "\n")


if __name__ == "__main__":
    main()
