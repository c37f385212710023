"""Thread settings of the command line, made before numpy is first imported.

The flight kernel runs its own threads (:mod:`propulsion.flight.batch`); numpy's
linear-algebra library would otherwise start one spinning thread per core at its first
call and compete with them. A value the user has set wins.
"""

from __future__ import annotations

import os

for _variable in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_variable, "1")
