"""``python -m optim.cli``: the same as the ``eddypull`` command."""

import sys

from optim.cli.main import main

sys.exit(main())
