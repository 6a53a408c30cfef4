"""eddypull studies, reports and the command line (imports models/, never the other way).

Importing ``models`` limits BLAS to one thread for the fast model's small solves
(models/threads.py); optim imports it first so that the limit is set before numpy loads.
"""

import models  # noqa: F401
