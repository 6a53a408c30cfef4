"""The demo scenarios (the invented Harrowgate Tinware line), shipped as package data.

``demo_study.toml`` is a commented example study file (the cap lifter); ``demo_design.toml`` its
base design. ``demo_sorting.toml`` is a second one on the same magnet: a family of parts
(``[[parts]]``), lifting 10 mm caps and leaving 16 mm ones. ``demo_shading_winding.toml`` is
the demo design with a capacitor-closed shading winding in the ring's groove. ``eddypull demo`` (``--scenario
lifter``, the default, or ``sorting``) reads them from the installed package
(``importlib.resources``) and writes the study's outputs in the current folder, never beside
these files.
"""

from __future__ import annotations

from importlib.resources import files
from pathlib import Path

__all__ = ["DEMO_DESIGN", "DEMO_STUDY", "DEMO_SORTING", "DEMO_SHADING_WINDING", "SCENARIOS"]

#: The installed package folder that holds the demo files (a plain folder: setuptools installs
#: packages unzipped, so ``files`` gives a real path that the study file's relative design uses).
_HERE = Path(str(files(__name__)))

#: The demo's base design file.
DEMO_DESIGN = _HERE / "demo_design.toml"
#: The demo study file (``design = "demo_design.toml"``, beside it).
DEMO_STUDY = _HERE / "demo_study.toml"
#: The demo design with a shading winding closed through a capacitor instead of its solid ring.
DEMO_SHADING_WINDING = _HERE / "demo_shading_winding.toml"
#: The sorting demo's study file (the same base design, a lift part and a leave part).
DEMO_SORTING = _HERE / "demo_sorting.toml"
#: ``eddypull demo --scenario NAME`` -> its study file; the first is the default.
SCENARIOS = {"lifter": DEMO_STUDY, "sorting": DEMO_SORTING}
