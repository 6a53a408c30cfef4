"""The ``eddypull`` command line: top-level commands and the ``study`` subcommands."""

from optim.cli.main import main

__all__ = ["main"]
