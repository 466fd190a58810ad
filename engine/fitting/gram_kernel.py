"""Compiled lasso / elastic-net path on a standardized Gram matrix (rows outnumber columns).

The same method as ``coordinate.solve_path`` on its Gram route, with the whole per-penalty
loop compiled (numba), so that a penalty costs its arithmetic and not the 30-50 small library
calls of the interpreted loop. Per penalty lambda, with l1 = n*lambda*mix*v_j and
l2 = n*lambda*(1-mix)*v_j:

1. Exact step: on an active set A with signs s, solve
   (Z_A'Z_A + diag(l2_A)) b_A = Z_A'yc - l1_A * s; drop a coefficient whose sign flips, add the
   columns that violate their condition, up to six tries. The first try takes A and s
   extrapolated from the last two penalties. One Cholesky factor R'R = Z_A'Z_A + s0*V_A is kept
   across penalties and changed a few columns at a time (bordering, in one block when several
   enter; Givens rotations when one leaves). The lasso (s0 = 0) solves with it directly; the
   elastic net, whose shift n*lambda*(1-mix) moves with every penalty, by conjugate gradients
   preconditioned with the factor of an earlier shift s0 (eigenvalues between s/s0 and 1),
   refactored (at the shift of two penalties further on) when a solve needed more than a
   few steps; a solve stops early once a coefficient has certainly changed sign (that try is
   repeated without the column anyway). Their first residual needs Z'Z_A x0 for the start
   x0: it follows from the gradients of the last two penalties (the start is extrapolated
   from them) or from the last try's product, corrected on the few columns where the start
   differs.
2. Otherwise cyclic coordinate descent with covariance updates on the strong set
   (Tibshirani et al. 2012), grown by the columns violating their condition outside it, then
   the exact step on the set descent found ("polish") if it improves the conditions.

A solution is accepted when every optimality condition holds to ``accept_abs``. When a penalty
ends above ``retry_abs`` after a tighter descent, the kernel stops and reports it; the caller
then runs the interpreted route, which has more fallbacks (exact path following near
saturation). Every column must be penalized (v_j > 0): unpenalized ones are partialled out
before the call. Columns with Z'Z_jj = 0 (constant on these rows) never enter.
"""

from __future__ import annotations

import os
from collections import namedtuple

import numpy as np

try:  # numba is a dependency; without it (or with TAMIS_COMPILED=0) the interpreted route runs
    import llvmlite.binding as _llvm
    from numba import njit, types
    from numba.extending import get_cython_function_address

    AVAILABLE = os.environ.get("TAMIS_COMPILED", "1") != "0"
except ImportError:  # pragma: no cover - exercised only where numba cannot be installed
    AVAILABLE = False

    def njit(*args, **kwargs):  # type: ignore[no-redef]
        return (lambda f: f) if not args or not callable(args[0]) else args[0]


def _blas(name: str, n_args: int, library: str):
    """A routine of scipy's BLAS or LAPACK as an external symbol of compiled code (arguments: pointers).

    Bound by name, not address, so that the compiled code can be cached on disk: the symbol is
    registered again at every import, before any cached code is loaded.
    """
    if not AVAILABLE:
        return None
    symbol = f"tamis_{name}"
    _llvm.add_symbol(symbol, get_cython_function_address(f"scipy.linalg.cython_{library}", name))
    return types.ExternalFunction(symbol, types.void(*([types.voidptr] * n_args)))


# triangular solves with a leading dimension (the factor lives in a p x p buffer), which the
# library's Python wrappers do not offer; measured 3x faster here than the same loops compiled
_dtrsv = _blas("dtrsv", 8, "blas")
# the same with many right-hand sides (columns bordering the factor)
_dtrsm = _blas("dtrsm", 11, "blas")
# Cholesky factorization (refactoring the elastic net's preconditioner at a new shift)
_dpotrf = _blas("dpotrf", 5, "lapack")

# why the compiled loop was switched off in this process (it failed to build or load), if it was
DISABLED_BECAUSE = ""


def disable(reason: str) -> None:
    """Use the interpreted loop for the rest of this process (paths then carry a note)."""
    global AVAILABLE, DISABLED_BECAUSE
    AVAILABLE = False
    DISABLED_BECAUSE = reason[:200]


# compiled code is cached on disk: next to this file, or in the user's cache folder when that is
# read-only or the program is a frozen bundle (numba keys that cache on the executable)
_CACHE = True

# status codes of gram_path_chunk
OK = 0
FAILED = 1

_EXACT_TRIES = 6
_PCG_MAX_ITER = 60
# the exact step for columns added to a factor: a column whose remaining variance after the
# factored ones is below this share of its own is taken as dependent
_DEPENDENT_SHARE = 1e-10
_OUTER_ROUNDS = 100
# elastic net: the factor is made afresh when the last conjugate-gradient solve needed more
# iterations than this (each costs about 3 k^2 + p k, a refactoring k^3 / 3), at the shift of
# the penalty this many steps further down the grid (paired runs in one process, against 6
# and the current shift: 1000x500 path 0.89x, 5000x200 0.74x; 3 steps or 1 ahead, or
# refactoring after 3 iterations, did no better)
_REFACTOR_AFTER = 4
_REFACTOR_AHEAD = 2
# bordering with up to this many columns at once: one vector triangular solve per column
# (measured here at 300-450 factored columns: 2-3 of them cost 0.6-0.7 of one matrix solve;
# from about 5 columns the matrix solve, which packs the factor first, is faster)
_VECTOR_SOLVES_UP_TO = 4
# conjugate gradients stop when the active conditions hold to this share of the acceptance
# level (about 1e-12 scale-free, against 1e-15 for the direct lasso solve)
_CG_TOL_SHARE = 1e-2

# working arrays of one path (a named tuple: compiled code taking it can be cached). They are
# made by numpy in the caller, once per path, so memory tracing sees them
_Scratch = namedtuple(
    "_Scratch",
    "x rhs shift_v work full cand gcand strong work_set members start cols block fwd fwd_ok "
    "prod_of prod_ok",
)


def new_scratch(p: int) -> _Scratch:
    """Working arrays for a path on p columns (the block rows are touched only as used).

    fwd: R'^-1 q_A and R'^-1 (v*s)_A on the factored set, kept with the factor; fwd_ok[0]: 0
    when they are out of date (a refactoring, a changed sign) and must be solved afresh.
    prod_of: a coefficient vector u with full = Z'Z u (elastic net, where conjugate gradients
    start); prod_ok[0]: 0 when full holds no such product.
    """
    return _Scratch(
        np.empty(p), np.empty(p), np.empty(p), np.empty((6, p)),
        np.empty(p), np.empty(p), np.empty(p), np.zeros(p, dtype=np.bool_),
        np.empty(p, dtype=np.int64), np.zeros(p, dtype=np.bool_), np.empty(p),
        np.empty(p, dtype=np.int64), np.empty((p, p)), np.empty((2, p)),
        np.zeros(1, dtype=np.int64), np.zeros(p), np.zeros(1, dtype=np.int64),
    )  # fmt: skip


@njit(cache=_CACHE, nogil=True)  # parts build their problems side by side
def standardize_gram(G, less, subtract, d, n, inv, const, out):
    """out = ((G - less) - n d d') * inv inv', the diagonal n (0 for constant columns).

    One pass over the p x p cross products of a part (the numpy route takes five, and a fresh
    temporary for the difference); subtract False ignores ``less``; ``out`` may be ``G``.
    Same operations in the same order as the numpy route, so the same bits.
    """
    p = G.shape[0]
    nf = float(n)
    for i in range(p):
        gi = G[i]
        li = less[i]
        oi = out[i]
        di = d[i]
        vi = inv[i]
        for j in range(p):
            c = gi[j] - li[j] if subtract else gi[j]
            oi[j] = (c - (di * d[j]) * nf) * (vi * inv[j])
        oi[i] = 0.0 if const[i] else nf


@njit(cache=_CACHE, fastmath={"reassoc", "contract"})
def _dot(a, b, k):
    s = 0.0
    for i in range(k):
        s += a[i] * b[i]
    return s


@njit(cache=_CACHE)
def _sign(x):
    return 1.0 if x > 0 else (-1.0 if x < 0 else 0.0)


@njit(cache=_CACHE)
def _gradient(Q, q, beta, g):
    """g = q - Q beta (Q symmetric: one row per nonzero coefficient)."""
    p = q.shape[0]
    for i in range(p):
        g[i] = q[i]
    for j in range(p):
        b = beta[j]
        if b != 0.0:
            row = Q[j]
            for i in range(p):
                g[i] -= b * row[i]


@njit(cache=_CACHE)
def _gradient_of(Q, q, beta, g, pos, factored):
    """g_j = q_j - Q[j] . beta for the columns in the factor (factored) or outside it."""
    p = q.shape[0]
    for j in range(p):
        if (pos[j] >= 0) == factored:
            g[j] = q[j] - _dot(Q[j], beta, p)


@njit(cache=_CACHE)
def _violation(g, beta, j, l1, l2):
    b = beta[j]
    if b == 0.0:
        return max(abs(g[j]) - l1, 0.0)
    return abs(g[j] - l2 * b - l1 * _sign(b))


@njit(cache=_CACHE)
def _max_violation(g, beta, lam, n, mix, v):
    worst = 0.0
    for j in range(g.shape[0]):
        x = _violation(g, beta, j, n * lam * mix * v[j], n * lam * (1.0 - mix) * v[j])
        if x > worst:
            worst = x
    return worst


# ---- the Cholesky factor R'R = Z_A'Z_A of the ordered set order[:k] (R upper, row-major) ----


@njit(cache=_CACHE)
def _triangular(R, k, x, transposed):
    """x <- R'^-1 x (transposed False) or R^-1 x (True) for the leading k x k block of R."""
    if k == 0:
        return
    # R (row-major, upper) is, to Fortran, the lower triangle of a column-major matrix
    chars = np.empty(3, np.uint8)
    chars[0] = 76  # "L"
    chars[1] = 78  # "N"
    chars[2] = 84 if transposed else 78  # "T" / "N"
    ints = np.empty(3, np.int32)
    ints[0] = k
    ints[1] = R.shape[1]
    ints[2] = 1
    _dtrsv(
        chars[0:].ctypes, chars[2:].ctypes, chars[1:].ctypes, ints[0:].ctypes, R.ctypes,
        ints[1:].ctypes, x.ctypes, ints[2:].ctypes,
    )  # fmt: skip


@njit(cache=_CACHE)
def _factor_append(Q, R, order, pos, st, fs, v, cols, m, block):
    """Border the factor of Z_A'Z_A + s0*V_A with columns cols[:m] at once (one triangular
    solve with m right-hand sides instead of m passes over the factor); False (factor
    unchanged) if one of them is dependent on the others or on the factored ones.
    """
    k = st[0]
    for c in range(m):  # block[c, :k] = Q[A, cols[c]]: column-major k x m to Fortran
        row = Q[cols[c]]
        out = block[c]
        for i in range(k):
            out[i] = row[order[i]]
    if k > 0 and m <= _VECTOR_SOLVES_UP_TO:  # a few right-hand sides: vector solves are faster
        for c in range(m):
            _triangular(R, k, block[c], False)
    elif k > 0:
        chars = np.empty(3, np.uint8)
        chars[0] = 76  # "L": side left, and R is lower to Fortran
        chars[1] = 78  # "N"
        chars[2] = 78
        ints = np.empty(4, np.int32)
        ints[0] = k
        ints[1] = m
        ints[2] = R.shape[1]
        ints[3] = block.shape[1]
        one = np.ones(1)
        _dtrsm(
            chars[0:].ctypes, chars[0:].ctypes, chars[1:].ctypes, chars[2:].ctypes,
            ints[0:].ctypes, ints[1:].ctypes, one.ctypes, R.ctypes, ints[2:].ctypes,
            block.ctypes, ints[3:].ctypes,
        )  # fmt: skip
    # the new diagonal block: Q[J, J] + shift - X'X, factored in place (upper, row-major)
    corner = np.empty((m, m))
    for a in range(m):
        ja = cols[a]
        for b in range(a, m):
            value = Q[ja, cols[b]] - _dot(block[a], block[b], k)
            if b == a:
                value += fs[0] * v[ja]
            corner[a, b] = value
    for a in range(m):  # right-looking Cholesky of the corner (upper)
        d = corner[a, a]
        if not _independent(d, Q, v, cols[a], fs[0]):
            return False
        d = np.sqrt(d)
        corner[a, a] = d
        for b in range(a + 1, m):
            corner[a, b] /= d
        for b in range(a + 1, m):
            f = corner[a, b]
            for c in range(b, m):
                corner[b, c] -= f * corner[a, c]
    for c in range(m):
        for i in range(k):
            R[i, k + c] = block[c, i]
        for a in range(c + 1):
            R[k + a, k + c] = corner[a, c]
        order[k + c] = cols[c]
        pos[cols[c]] = k + c
    st[0] = k + m
    return True


@njit(cache=_CACHE)
def _refactor(Q, R, order, st, fs, v, shift):
    """Factor the current set afresh at a new shift (LAPACK dpotrf); False if it fails."""
    k = st[0]
    fs[0] = shift
    if k == 0:
        return True
    for i in range(k):  # the upper triangle, row-major: to Fortran, the lower one
        row = Q[order[i]]
        Ri = R[i]
        for c in range(i, k):
            Ri[c] = row[order[c]]
        Ri[i] += shift * v[order[i]]
    chars = np.empty(1, np.uint8)
    chars[0] = 76  # "L"
    ints = np.empty(3, np.int32)
    ints[0] = k
    ints[1] = R.shape[1]
    ints[2] = 0
    _dpotrf(chars.ctypes, ints[0:].ctypes, R.ctypes, ints[1:].ctypes, ints[2:].ctypes)
    return ints[2] == 0


@njit(cache=_CACHE, inline="always")
def _independent(remaining, Q, v, j, shift):
    """Whether column j's variance left after the factored columns (``remaining``, a squared
    pivot) is a large enough share of its own to factor it (see _DEPENDENT_SHARE)."""
    return remaining > _DEPENDENT_SHARE * (Q[j, j] + shift * v[j])


@njit(cache=_CACHE)
def _refactor_set(Q, R, order, pos, st, fs, v, members, shift):
    """Make the factored set equal ``members`` by factoring it afresh at ``shift``.

    For a penalty whose elastic-net factor is due to be made afresh anyway: bordering the
    entering columns and rotating out the leaving ones first would be thrown away. The kept
    columns stay in their order, the entering ones follow; False (factor emptied) if the
    factorization fails or an entering column is dependent (the test of the bordering).
    """
    p = members.shape[0]
    k = 0
    for i in range(st[0]):
        j = order[i]
        if members[j]:
            order[k] = j
            pos[j] = k
            k += 1
        else:
            pos[j] = -1
    kept = k
    for j in range(p):
        if members[j] and pos[j] < 0:
            order[k] = j
            pos[j] = k
            k += 1
    st[0] = k
    ok = _refactor(Q, R, order, st, fs, v, shift)
    for i in range(kept, k):
        j = order[i]
        if not ok or not _independent(R[i, i] * R[i, i], Q, v, j, shift):
            ok = False
            break
    if not ok:
        for i in range(k):
            pos[order[i]] = -1
        st[0] = 0
    return ok


@njit(cache=_CACHE)
def _factor_delete(R, order, pos, st, m, carry):
    """Remove position m from the factor (Givens rotations restore the triangle).

    Each row of ``carry`` holding y = R'^-1 b (b on the factored set) is carried along: the
    same rotations, the last entry dropped (0 rows: nothing carried).
    """
    k = st[0]
    st[0] = k - 1
    pos[order[m]] = -1
    # every shift goes through a copy: a row moved onto itself one entry over is copied one
    # entry at a time, through another array the loop vectorizes (2-3x faster here)
    shifted = np.empty(k)
    n_moved = k - 1 - m
    for i in range(m + 1):  # the rows above and row m lose the column from m on
        row = R[i]
        src = row[m + 1 : k]
        for c in range(n_moved):
            shifted[c] = src[c]
        dst = row[m : k - 1]
        for c in range(n_moved):
            dst[c] = shifted[c]
    for c in range(m, k - 1):
        order[c] = order[c + 1]
        pos[order[c]] = c
    if m == k - 1:
        return
    # rows m+1.. lose the column as they are read by the rotation that mixes them with the
    # row above (one pass over them instead of a shift and then a rotation), through the
    # copy so that the two rows of the rotation are distinct arrays
    for jj in range(m, k - 1):
        top = R[jj]
        bottom = R[jj + 1]
        a = top[jj]
        b = bottom[jj + 1]
        r = np.hypot(a, b)
        if r == 0.0:  # cannot happen for a positive definite block; keep the shape anyway
            for col in range(jj, k - 1):
                bottom[col] = bottom[col + 1]
            bottom[jj] = 0.0
            continue
        c = a / r
        s = b / r
        top[jj] = r
        bottom[jj] = 0.0
        for t in range(carry.shape[0]):
            x = carry[t, jj]
            y = carry[t, jj + 1]
            carry[t, jj] = c * x + s * y
            carry[t, jj + 1] = c * y - s * x
        n_rest = k - 2 - jj
        src = bottom[jj + 2 : k]
        for i in range(n_rest):
            shifted[i] = src[i]
        upper = top[jj + 1 : k - 1]
        lower = bottom[jj + 1 : k - 1]
        for i in range(n_rest):
            x = upper[i]
            y = shifted[i]
            upper[i] = c * x + s * y
            lower[i] = c * y - s * x


@njit(cache=_CACHE)
def _factor_solve(R, k, b, x):
    """x = (R'R)^-1 b for the first k entries."""
    for i in range(k):
        x[i] = b[i]
    _triangular(R, k, x, False)
    _triangular(R, k, x, True)


@njit(cache=_CACHE)
def _append(Q, q, R, order, pos, st, fs, v, sgn, cols, m, scratch):
    """``_factor_append`` that also extends the forward-solved right-hand sides (scratch.fwd:
    R'^-1 q_A and R'^-1 (v*s)_A, the two parts of every exact step's right-hand side)."""
    k = st[0]
    block = scratch.block
    if not _factor_append(Q, R, order, pos, st, fs, v, cols, m, block):
        return False
    fwd = scratch.fwd
    for c in range(m):  # block[c, :k] is the new column's part R[:k, k + c]
        i = k + c
        j = cols[c]
        yq = q[j] - _dot(block[c], fwd[0], k)
        ys = v[j] * sgn[j] - _dot(block[c], fwd[1], k)
        for a in range(c):
            yq -= R[k + a, i] * fwd[0, k + a]
            ys -= R[k + a, i] * fwd[1, k + a]
        fwd[0, i] = yq / R[i, i]
        fwd[1, i] = ys / R[i, i]
    return True


@njit(cache=_CACHE)
def _set_sign(sgn, pos, j, value, fwd_ok):
    """sgn[j] = value; a changed sign of a factored column outdates scratch.fwd (fwd_ok: its
    flag; the whole scratch tuple would be copied at every call)."""
    if pos[j] >= 0 and sgn[j] != value:
        fwd_ok[0] = 0
    sgn[j] = value


@njit(cache=_CACHE)
def _sync_factor(Q, q, R, order, pos, st, fs, v, sgn, members, shift, scratch):
    """Make the factored set equal ``members`` (bool mask); False if a column is dependent.

    An empty factor starts at the given shift (elastic net: n*lambda*(1-mix); lasso: 0).
    """
    cols = scratch.cols
    for m in range(st[0] - 1, -1, -1):  # removals from the end first: cheapest rotations
        if not members[order[m]]:
            _factor_delete(R, order, pos, st, m, scratch.fwd)
    if st[0] == 0:
        fs[0] = shift
        scratch.fwd_ok[0] = 1  # nothing factored, nothing to be out of date
    m = 0
    for j in range(members.shape[0]):
        if members[j] and pos[j] < 0:
            cols[m] = j
            m += 1
    if m == 0:
        return True
    if _append(Q, q, R, order, pos, st, fs, v, sgn, cols, m, scratch):
        return True
    for t in range(m):  # one of them is dependent: one at a time, to the first refusal
        if not _append(Q, q, R, order, pos, st, fs, v, sgn, cols[t:], 1, scratch):
            return False
    return True


# ---- the exact step on the factored set ----


@njit(cache=_CACHE)
def _shifted_matvec(Q, order, k, shift_v, x, out, full):
    """out = (Z_A'Z_A + diag(shift_v)) x on the factored set, full = Z'Z_A x (out and full:
    p-length)."""
    p = full.shape[0]
    if 5 * k > 3 * p:
        # with most columns factored, a dot of every row with x spread over all columns
        # (Q is symmetric) beats adding up the k rows: measured 28 against 45 us at 490 of 500
        for i in range(p):
            out[i] = 0.0
        for i in range(k):
            out[order[i]] = x[i]
        for j in range(p):
            full[j] = _dot(Q[j], out, p)
    else:
        for i in range(p):
            full[i] = 0.0
        for i in range(k):
            xi = x[i]
            if xi != 0.0:
                row = Q[order[i]]
                for c in range(p):
                    full[c] += xi * row[c]
    for i in range(k):
        out[i] = full[order[i]] + shift_v[i] * x[i]


@njit(cache=_CACHE)
def _product_of_start(Q, pos, k, x, prod_of, prod_ok, full):
    """full = Z'Z_A x (x on the factored set) from the known full = Z'Z prod_of, by the
    columns where the two differ; False (nothing changed) when the product is unknown or more
    than half as many columns differ as are factored (the plain product is then cheaper)."""
    if prod_ok[0] == 0:
        return False
    p = full.shape[0]
    limit = k // 2
    m = 0
    for j in range(p):
        xj = x[pos[j]] if pos[j] >= 0 else 0.0
        if xj != prod_of[j]:
            m += 1
            if m > limit:
                return False
    for j in range(p):
        xj = x[pos[j]] if pos[j] >= 0 else 0.0
        d = xj - prod_of[j]
        if d != 0.0:
            row = Q[j]
            for c in range(p):
                full[c] += d * row[c]
            prod_of[j] = xj
    return True


@njit(cache=_CACHE)
def _conjugate_gradients(
    Q, R, order, k, rhs, shift_v, delta_v, x, tol_abs, enough_abs, work, full, have_product,
    sgn_v,
):  # fmt: skip
    """Solve (Z_A'Z_A + diag(shift_v)) x = rhs from x, preconditioned by the factor R'R = M.

    The operator is M + diag(delta_v) (delta_v: the current shift minus the factor's), so
    with w = M d kept by the recursion w <- r + beta*w (as z = M^-1 r) a step needs no product
    with Z_A'Z_A: two triangular solves and vector updates. The recursion drifts, so the true
    residual is taken afresh before stopping (and the recursion restarted from it, twice at
    most). Aims at residuals below tol_abs, settles for enough_abs once they stop falling
    (rounding level). Returns (solved, iterations, fresh): fresh when ``full`` holds
    Z'Z_A x for the x returned (the last true residual was taken there), i.e. the gradient
    of every column is q - full without another product.

    sgn_v: the signs of the factored set. The solve stops early (solved False, iterations
    negative) once a coefficient has certainly taken the other sign: the exact step will drop
    it and solve again, so the remaining digits of this one would be wasted. Certain: beyond
    zero by ten times the error left, estimated as the largest change of the last step times
    rho / (1 - rho), rho the contraction of the residual in that step (taken only when the
    step at least halved it).
    """
    res = work[0]
    z = work[1]
    d = work[2]
    ad = work[3]
    w = work[4]
    it = 0
    fresh_before = np.inf
    fresh = False
    for restart in range(3):
        if restart > 0 or not have_product:
            _shifted_matvec(Q, order, k, shift_v, x, ad, full)
        else:  # full already holds Z'Z_A x
            for i in range(k):
                ad[i] = full[order[i]] + shift_v[i] * x[i]
        fresh = True
        worst = 0.0
        for i in range(k):
            res[i] = rhs[i] - ad[i]
            worst = max(worst, abs(res[i]))
        if worst <= tol_abs or not worst < 0.5 * fresh_before:
            break
        fresh_before = worst
        _factor_solve(R, k, res, z)
        for i in range(k):
            d[i] = z[i]
            w[i] = res[i]
        rz = _dot(res, z, k)
        best = worst
        stalled = 0
        while it < _PCG_MAX_ITER:
            it += 1
            for i in range(k):
                ad[i] = w[i] + delta_v[i] * d[i]
            dad = _dot(d, ad, k)
            if not dad > 0.0:
                break
            alpha = rz / dad
            before = worst
            worst = 0.0
            step = 0.0
            fresh = False
            for i in range(k):
                x[i] += alpha * d[i]
                res[i] -= alpha * ad[i]
                worst = max(worst, abs(res[i]))
                step = max(step, abs(alpha * d[i]))
            if worst <= tol_abs:
                break
            if worst < 0.5 * before:
                # the error left is about the last step times rho / (1 - rho), rho the
                # residual's contraction in that step; a sign change ten times beyond it
                rho = worst / before
                beyond = 10.0 * step * rho / (1.0 - rho)
                for i in range(k):
                    if x[i] * sgn_v[i] < -beyond:
                        return False, -it, False
            if worst < 0.5 * best:
                best = worst
                stalled = 0
            else:
                stalled += 1
                if stalled >= 3:
                    break
            _factor_solve(R, k, res, z)
            rz_new = _dot(res, z, k)
            if not rz > 0.0:
                break
            beta_cg = rz_new / rz
            rz = rz_new
            for i in range(k):
                d[i] = z[i] + beta_cg * d[i]
                w[i] = res[i] + beta_cg * w[i]
    return worst <= enough_abs, it, fresh


# what _candidate found: no solution, a solution, or a solution with Z'Z_A x in scratch.full
_NO_SOLUTION = 0
_SOLVED = 1
_SOLVED_WITH_PRODUCT = 2


@njit(cache=_CACHE)
def _candidate(Q, q, R, order, pos, st, fs, sgn, lam, n, mix, v, start, x, accept_abs, scratch):
    """Exact solution on the factored set with signs sgn into x: _NO_SOLUTION, _SOLVED, or
    _SOLVED_WITH_PRODUCT when conjugate gradients left Z'Z_A x in scratch.full.

    Lasso: one triangular solve with the factor of Z_A'Z_A (the forward half is carried in
    scratch.fwd). Elastic net: the factor is of Z_A'Z_A + shift0*V_A for another shift0;
    conjugate gradients close the gap to the current shift, and when they needed more than
    _REFACTOR_AFTER iterations last time the factor is first made afresh, at the shift
    _REFACTOR_AHEAD penalties further down the grid.
    """
    k = st[0]
    shift = n * lam * (1.0 - mix)
    fresh = False
    if shift == fs[0]:
        # R'^-1 rhs = R'^-1 q_A - n*lambda*mix * R'^-1 (v*s)_A, both kept up to date as the
        # factor changes: one triangular solve per step instead of two
        fwd = scratch.fwd
        if scratch.fwd_ok[0] == 0:
            for i in range(k):
                j = order[i]
                fwd[0, i] = q[j]
                fwd[1, i] = v[j] * sgn[j]
            _triangular(R, k, fwd[0], False)
            _triangular(R, k, fwd[1], False)
            scratch.fwd_ok[0] = 1
        c = n * lam * mix
        for i in range(k):
            x[i] = fwd[0, i] - c * fwd[1, i]
        _triangular(R, k, x, True)
        ok = True
    else:
        if st[1] > _REFACTOR_AFTER:
            st[3] += 1
            scratch.fwd_ok[0] = 0  # a new factor: its forward solves are made when needed
            # at the shift two penalties further down: the factor then serves penalties on
            # both sides of its own, with eigenvalues of the preconditioned system closer to 1
            ahead = shift
            if fs[1] > lam > 0.0:
                ahead = shift * (lam / fs[1]) ** _REFACTOR_AHEAD
            if not _refactor(Q, R, order, st, fs, v, ahead):
                return _NO_SOLUTION
        rhs = scratch.rhs
        shift_v = scratch.shift_v
        delta_v = scratch.work[5]
        for i in range(k):
            j = order[i]
            rhs[i] = q[j] - n * lam * mix * v[j] * sgn[j]
            shift_v[i] = shift * v[j]
            delta_v[i] = (shift - fs[0]) * v[j]
            x[i] = start[j]  # where conjugate gradients start
        prod_of = scratch.prod_of
        prod_ok = scratch.prod_ok
        known = _product_of_start(Q, pos, k, x, prod_of, prod_ok, scratch.full)
        sgn_v = scratch.cand  # free here: the signs in factor order
        for i in range(k):
            sgn_v[i] = sgn[order[i]]
        ok, it, fresh = _conjugate_gradients(
            Q, R, order, k, rhs, shift_v, delta_v, x, _CG_TOL_SHARE * accept_abs,
            0.1 * accept_abs, scratch.work, scratch.full, known, sgn_v,
        )  # fmt: skip
        prod_ok[0] = 1 if fresh else 0
        if it < 0:  # stopped at a certain sign change: x holds it, the caller drops the column
            st[1] = -it
            st[2] -= it
            return _SOLVED
        if fresh:  # full = Z'Z x: the next start's product follows from it
            for j in range(prod_of.shape[0]):
                prod_of[j] = x[pos[j]] if pos[j] >= 0 else 0.0
        st[1] = it
        st[2] += it
    if not ok:
        return _NO_SOLUTION
    for i in range(k):
        if not np.isfinite(x[i]):
            return _NO_SOLUTION
    return _SOLVED_WITH_PRODUCT if fresh else _SOLVED


@njit(cache=_CACHE)
def _try_exact(Q, q, R, order, pos, st, fs, sgn, lam, n, mix, v, beta, g, accept_abs, scratch):
    """Exact solution from the current factored set (= active set of beta), up to six tries."""
    p = q.shape[0]
    x = scratch.x
    cand = scratch.cand
    gcand = scratch.gcand
    start = scratch.start  # filled by the caller; later tries start from the last one
    for _ in range(_EXACT_TRIES):
        st[4] += 1
        found = _candidate(
            Q, q, R, order, pos, st, fs, sgn, lam, n, mix, v, start, x, accept_abs, scratch
        )
        if found == _NO_SOLUTION:
            return False
        k = st[0]
        for i in range(k):
            start[order[i]] = x[i]
        flipped = False
        for i in range(k):
            if _sign(x[i]) != sgn[order[i]]:
                flipped = True
        if flipped:  # a coefficient crossed zero: guess that it leaves, try again
            for i in range(k - 1, -1, -1):
                if _sign(x[i]) != sgn[order[i]]:
                    _factor_delete(R, order, pos, st, i, scratch.fwd)
            continue
        for j in range(p):
            cand[j] = 0.0
        for i in range(k):
            cand[order[i]] = x[i]
        # with most columns active, the gradient of the inactive ones alone (a dot with
        # each of their rows) decides the try; the active ones follow only for an answer.
        # Conjugate gradients may have left the product for every column already
        by_rows = 2 * k > p and found != _SOLVED_WITH_PRODUCT
        if found == _SOLVED_WITH_PRODUCT:
            full = scratch.full
            for j in range(p):
                gcand[j] = q[j] - full[j]
        elif by_rows:
            _gradient_of(Q, q, cand, gcand, pos, False)
        else:
            _gradient(Q, q, cand, gcand)
        cols = scratch.cols
        m = 0
        for j in range(p):
            if pos[j] < 0 and abs(gcand[j]) - n * lam * mix * v[j] > accept_abs:
                cols[m] = j
                m += 1
                sgn[j] = _sign(gcand[j])
        if m > 0 and not _append(Q, q, R, order, pos, st, fs, v, sgn, cols, m, scratch):
            return False
        added = m > 0
        if not added:
            if by_rows:
                _gradient_of(Q, q, cand, gcand, pos, True)
            for j in range(p):
                beta[j] = cand[j]
                g[j] = gcand[j]
            return True
    return False


# ---- coordinate descent ----


@njit(cache=_CACHE)
def _descend(Q, g, beta, work_set, m, lam, n, mix, v, tol_abs, max_sweeps):
    """Cyclic descent over work_set[:m] until its conditions hold to tol_abs; (sweeps, done)."""
    p = g.shape[0]
    for sweep in range(max_sweeps):
        for t in range(m):
            j = work_set[t]
            qjj = Q[j, j]
            if qjj <= 0.0:
                continue
            bj = beta[j]
            z = g[j] + qjj * bj
            thr = n * lam * mix * v[j]
            den = qjj + n * lam * (1.0 - mix) * v[j]
            if z > thr:
                nb = (z - thr) / den
            elif z < -thr:
                nb = (z + thr) / den
            else:
                nb = 0.0
            delta = nb - bj
            if delta != 0.0:
                beta[j] = nb
                row = Q[j]
                for i in range(p):
                    g[i] -= delta * row[i]
        worst = 0.0
        for t in range(m):
            j = work_set[t]
            x = _violation(g, beta, j, n * lam * mix * v[j], n * lam * (1.0 - mix) * v[j])
            if x > worst:
                worst = x
        if worst <= tol_abs:
            return sweep + 1, True
    return max_sweeps, False


@njit(cache=_CACHE)
def _polish(Q, q, R, order, pos, st, fs, sgn, lam, n, mix, v, beta, g, accept_abs, scratch):
    """Replace a descent solution by the exact one on its active set if that is no worse."""
    p = q.shape[0]
    members = scratch.members
    fwd_ok = scratch.fwd_ok
    for j in range(p):
        members[j] = beta[j] != 0.0
        _set_sign(sgn, pos, j, _sign(beta[j]), fwd_ok)
    shift = n * lam * (1.0 - mix)
    if not _sync_factor(Q, q, R, order, pos, st, fs, v, sgn, members, shift, scratch) or st[0] == 0:
        return
    x = scratch.x
    found = _candidate(
        Q, q, R, order, pos, st, fs, sgn, lam, n, mix, v, beta, x, accept_abs, scratch
    )
    if found == _NO_SOLUTION:
        return
    k = st[0]
    for i in range(k):
        if _sign(x[i]) != sgn[order[i]]:
            return
    cand = scratch.cand
    gcand = scratch.gcand
    for j in range(p):
        cand[j] = 0.0
    for i in range(k):
        cand[order[i]] = x[i]
    _gradient(Q, q, cand, gcand)
    if _max_violation(gcand, cand, lam, n, mix, v) <= _max_violation(g, beta, lam, n, mix, v):
        for j in range(p):
            beta[j] = cand[j]
            g[j] = gcand[j]


@njit(cache=_CACHE)
def _descent_round(
    Q, q, R, order, pos, st, fs, sgn, lam, prev, n, mix, v, beta, g, ever, accept_abs,
    cd_tol_abs, max_sweeps, scratch,
):  # fmt: skip
    """Descent on the strong set grown by violators, then the polish; (sweeps, converged)."""
    p = q.shape[0]
    strong = scratch.strong
    work_set = scratch.work_set
    for j in range(p):
        strong[j] = ever[j] or abs(g[j]) >= n * mix * v[j] * (2.0 * lam - prev)
    sweeps = 0
    for _ in range(_OUTER_ROUNDS):
        m = 0
        for j in range(p):
            if strong[j]:
                work_set[m] = j
                m += 1
        it, done = _descend(Q, g, beta, work_set, m, lam, n, mix, v, cd_tol_abs, max_sweeps)
        sweeps += it
        if not done:
            return sweeps, False
        _gradient(Q, q, beta, g)  # fresh: the running updates drift by rounding
        _polish(Q, q, R, order, pos, st, fs, sgn, lam, n, mix, v, beta, g, accept_abs, scratch)
        grown = False
        for j in range(p):
            if not strong[j] and abs(g[j]) > n * lam * mix * v[j] + accept_abs:
                strong[j] = True
                grown = True
        if not grown:
            return sweeps, True
    return sweeps, False


@njit(cache=_CACHE, nogil=True)  # parts run in threads side by side
def gram_path_chunk(
    Q, q, n, lams, k0, k1, mix, v, accept_abs, cd_tol_abs, retry_abs, tight_factor,
    max_sweeps, beta, g, g_before, ever, order, pos, R, sgn, st, fs, B_out, iters_out, kkt_out,
    scratch,
):  # fmt: skip
    """Penalties lams[k0:k1] from the state left by the previous chunk.

    State: beta, g = Z'(yc - Z beta) at the previous penalty, g_before (the same one penalty
    earlier), ever (columns ever active), sgn (signs of the factored
    set), the factor (order, pos, R; fs = [its shift, the previous penalty]) and counters
    st = [factor size, conjugate-gradient iterations of the last solve, all of them,
    refactorings, exact tries, descents]. Writes rows k0..k1-1 of B_out, iters_out,
    kkt_out (kkt in absolute units); scratch: ``new_scratch(p)``. Returns (OK, k1) or
    (FAILED, k) with k the penalty that could not be solved.
    """
    p = q.shape[0]
    members = scratch.members
    fwd_ok = scratch.fwd_ok
    for k in range(k0, k1):
        lam = lams[k]
        shift = n * lam * (1.0 - mix)
        sweeps = 0
        exact = False
        any_active = False
        # the first exact try starts from the set and signs extrapolated along the path from
        # the last two penalties: columns whose condition the extrapolated gradient breaks
        # enter, coefficients the extrapolation takes across zero leave (each wrong guess
        # costs one more try; every answer is still checked against all conditions)
        start = scratch.start
        t = 0.0
        if k >= 2 and lams[k - 2] > lams[k - 1]:  # a grid may repeat a penalty
            t = (lam - lams[k - 1]) / (lams[k - 1] - lams[k - 2])
        if mix < 1.0:
            # Z'Z beta = q - g and Z'Z beta_before = q - g_before: the product of the
            # extrapolated start beta + t (beta - beta_before) costs no pass over Z'Z, and
            # conjugate gradients start from it (corrected where the start differs)
            prod_of = scratch.prod_of
            full = scratch.full
            for j in range(p):
                b = beta[j]
                if t > 0.0:
                    prod_of[j] = b + t * (b - B_out[k - 2, j])
                    full[j] = (q[j] - g[j]) + t * (g_before[j] - g[j])
                else:
                    prod_of[j] = b
                    full[j] = q[j] - g[j]
            scratch.prod_ok[0] = 1
        for j in range(p):
            b = beta[j]
            start[j] = b
            if b != 0.0:
                any_active = True
                members[j] = True
                _set_sign(sgn, pos, j, _sign(b), fwd_ok)
                if t > 0.0:
                    start[j] = b + t * (b - B_out[k - 2, j])
                    if _sign(start[j]) != sgn[j]:
                        members[j] = False
            else:
                members[j] = False
                if t > 0.0:
                    guess = g[j] + t * (g[j] - g_before[j])
                    if abs(guess) > n * lam * mix * v[j] and Q[j, j] > 0.0:
                        members[j] = True
                        _set_sign(sgn, pos, j, _sign(guess), fwd_ok)
                        any_active = True
            g_before[j] = g[j]
        if any_active and mix < 1.0 and st[1] > _REFACTOR_AFTER and fs[1] > lam > 0.0:
            # the factor is due to be made afresh (see _candidate): at once for the new set
            st[1] = 0
            st[3] += 1
            fwd_ok[0] = 0
            ahead = shift * (lam / fs[1]) ** _REFACTOR_AHEAD
            synced = _refactor_set(Q, R, order, pos, st, fs, v, members, ahead)
        else:
            synced = any_active and _sync_factor(
                Q, q, R, order, pos, st, fs, v, sgn, members, shift, scratch
            )
        if any_active and not synced:  # a guessed column is dependent: the plain set
            for j in range(p):
                members[j] = beta[j] != 0.0
                _set_sign(sgn, pos, j, _sign(beta[j]), fwd_ok)
            synced = _sync_factor(Q, q, R, order, pos, st, fs, v, sgn, members, shift, scratch)
        if synced and st[0] > 0:
            exact = _try_exact(
                Q, q, R, order, pos, st, fs, sgn, lam, n, mix, v, beta, g, accept_abs, scratch
            )
        if not exact:
            st[5] += 1
            it, done = _descent_round(
                Q, q, R, order, pos, st, fs, sgn, lam, fs[1], n, mix, v, beta, g, ever,
                accept_abs, cd_tol_abs, max_sweeps, scratch,
            )  # fmt: skip
            sweeps += it
            if not done:
                return FAILED, k
            if _max_violation(g, beta, lam, n, mix, v) > retry_abs:
                work_set = scratch.work_set
                m = 0
                for j in range(p):
                    if beta[j] != 0.0:
                        work_set[m] = j
                        m += 1
                it, done = _descend(
                    Q, g, beta, work_set, m, lam, n, mix, v, cd_tol_abs * tight_factor,
                    max_sweeps,
                )  # fmt: skip
                sweeps += it
                _gradient(Q, q, beta, g)
                if not done or _max_violation(g, beta, lam, n, mix, v) > retry_abs:
                    return FAILED, k
        for j in range(p):
            if beta[j] != 0.0:
                ever[j] = True
            B_out[k, j] = beta[j]
        iters_out[k] = sweeps
        kkt_out[k] = _max_violation(g, beta, lam, n, mix, v)
        fs[1] = lam
    return OK, k1
