"""The morning after a study: front tables, plots, report, sweeps, FEM checks and the CAD hand-off."""
