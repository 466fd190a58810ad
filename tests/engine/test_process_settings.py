"""Process settings of Tamis's own processes (engine/__init__.py, engine.context.tune_own_process).

Each check runs in a fresh interpreter, since the settings act on a whole process and the
BLAS one only before numpy loads. What is checked is the mechanism, not a timing: the
environment variable OpenBLAS reads (its documented name, OPENBLAS_THREAD_TIMEOUT), and page
faults counted by the kernel (getrusage's ru_minflt) when a freed 2 MB array is allocated again.
"""

import os
import subprocess
import sys
import textwrap

import pytest

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))


def _run(code: str, env_extra: dict | None = None) -> str:
    env = {k: v for k, v in os.environ.items() if k != "OPENBLAS_THREAD_TIMEOUT"}
    env.update(env_extra or {})
    env["PYTHONPATH"] = ROOT + os.pathsep + env.get("PYTHONPATH", "")
    out = subprocess.run(
        [sys.executable, "-c", textwrap.dedent(code)],
        capture_output=True,
        text=True,
        env=env,
        timeout=120,
    )
    assert out.returncode == 0, out.stderr
    return out.stdout.strip()


def test_engine_before_numpy_shortens_the_blas_spin():
    code = """
        import os, engine
        import numpy
        print(os.environ.get("OPENBLAS_THREAD_TIMEOUT"))
    """
    assert _run(code) == "20"


def test_a_users_own_blas_setting_wins():
    code = """
        import os, engine
        print(os.environ.get("OPENBLAS_THREAD_TIMEOUT"))
    """
    assert _run(code, {"OPENBLAS_THREAD_TIMEOUT": "25"}) == "25"


def test_numpy_loaded_first_is_left_alone():
    # the library has read its settings already: changing the variable would only mislead
    code = """
        import os, numpy, engine
        print(os.environ.get("OPENBLAS_THREAD_TIMEOUT"))
    """
    assert _run(code) == "None"


_FAULTS = """
    import resource, sys
    import numpy as np
    from engine.context import THREAD_SWITCH_SECONDS, tune_own_process

    if sys.argv[-1] == "tuned":
        tune_own_process()
    a = np.ones((512, 512)); del a  # 2 MB, freed
    before = resource.getrusage(resource.RUSAGE_SELF).ru_minflt
    for _ in range(20):
        b = np.ones((512, 512)); del b
    faults = resource.getrusage(resource.RUSAGE_SELF).ru_minflt - before
    print(faults, sys.getswitchinterval() == THREAD_SWITCH_SECONDS)
"""


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="glibc allocator settings")
def test_own_process_reuses_freed_blocks_without_fresh_pages():
    untuned, switch_untuned = _run(_FAULTS.replace('sys.argv[-1] == "tuned"', "False")).split()
    tuned, switch = _run(_FAULTS.replace('sys.argv[-1] == "tuned"', "True")).split()
    assert switch == "True" and switch_untuned == "False"
    # 20 fresh 2 MB arrays touch 20 * 512 pages when each comes from the system (glibc's
    # moving threshold saves some of them: about 500 here); from the kept heap, almost none
    assert int(tuned) < 100 < int(untuned), (untuned, tuned)


def test_one_blas_thread_limits_scipys_blas_even_when_made_before_scipy_loads():
    # numpy and scipy each load their own OpenBLAS; reading a sheet takes the first
    # one_blas_thread() before anything has loaded scipy's. threadpoolctl's own fresh scan
    # (threadpool_info, its documented API) then says what a part thread would get
    code = """
        import sys
        import engine.blas_threads as bt
        assert "scipy" not in sys.modules, "the check needs scipy unloaded at this point"
        with bt.one_blas_thread():
            from threadpoolctl import threadpool_info
            import scipy.linalg
            blas = [i for i in threadpool_info() if i["user_api"] == "blas"]
            print(len(blas), sorted({i["num_threads"] for i in blas}))
    """
    assert _run(code) == "2 [1]"
