"""emulate: hear a proposed analog twin-T notch filter before you build it."""

__version__ = "0.1.0"

import os as _os

# The circuit engine solves thousands of tiny (about 10 x 10) systems; BLAS threads
# only add start-up and contention there, and they stall forked sweep workers.
_os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
