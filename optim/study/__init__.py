"""Studies: the study file, the search space, objectives and constraints, the workers and storage."""
