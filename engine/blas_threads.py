"""One BLAS thread for a stretch of work, without scanning the loaded libraries each time.

``threadpoolctl.threadpool_limits`` looks for the BLAS libraries anew at every use (a walk over
every loaded shared library, opening each match); the controller made here does it once per
process and is reused.
"""

from __future__ import annotations

__all__ = ["one_blas_thread"]

import threading

from threadpoolctl import ThreadpoolController

_controller: ThreadpoolController | None = None
_made = threading.Lock()


def one_blas_thread():
    """Context limiting BLAS to one thread (the library scan is done once and cached)."""
    global _controller
    with _made:
        if _controller is None:
            # the scan sees only libraries already loaded: numpy and scipy each bring their
            # own OpenBLAS, and scipy's (coordinate descent, the compiled path loop) may not
            # be loaded yet when the first caller (say, reading a sheet) gets here; a
            # controller made then left it free to start threads inside every part thread
            import numpy  # noqa: F401
            import scipy.linalg  # noqa: F401

            _controller = ThreadpoolController()
    return _controller.limit(limits=1, user_api="blas")
