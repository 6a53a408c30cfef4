"""eddypull studies, reports and the command line (imports models/, never the other way)."""

import os

# The fast model works on dense matrices of a few hundred rows: BLAS threads cost more than they
# save there (measured 218 ms vs 35 ms per evaluate on a busy 2-core machine). Workers run one
# evaluation per core instead. An explicit setting in the environment wins.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")
