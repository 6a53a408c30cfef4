"""The demo scenario (the invented Harrowgate Tinware cap lifter), shipped as package data.

``demo_study.toml`` is a commented example study file; ``demo_design.toml`` its base design.
``eddypull demo`` reads them from the installed package (``importlib.resources``) and writes the
study's outputs in the current folder, never beside these files.
"""

from __future__ import annotations

from importlib.resources import files
from pathlib import Path

__all__ = ["DEMO_DESIGN", "DEMO_STUDY"]

#: The installed package folder that holds the demo files (a plain folder: setuptools installs
#: packages unzipped, so ``files`` gives a real path that the study file's relative design uses).
_HERE = Path(str(files(__name__)))

#: The demo's base design file.
DEMO_DESIGN = _HERE / "demo_design.toml"
#: The demo study file (``design = "demo_design.toml"``, beside it).
DEMO_STUDY = _HERE / "demo_study.toml"
