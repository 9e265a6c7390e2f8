"""Test-wide settings.

The shell models' matrices are small: BLAS threads cost more than they give there, and on a shared 2-core
machine they fight the other processes (one shell computation measured 0.5 s on one thread, 54 s with the
default threads under load). The command line sets one thread for the same reason (`deflect/cli.py`); tests
that call the library directly get the same here, before numpy is first imported.
"""

import os

for _variable in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_variable, "1")

from threadpoolctl import threadpool_limits  # noqa: E402  (after the settings above)

threadpool_limits(limits=1)
