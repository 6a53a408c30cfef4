"""A model result as a study's flat numbers: one level of ``name`` / ``name.key`` -> float, the
form in which a trial's results are searched, constrained and stored."""

from __future__ import annotations

__all__ = ["flatten", "flat_result"]


def flatten(d: dict) -> dict[str, float]:
    """Numeric fields of a result dict as one level of ``name`` / ``name.key`` -> float."""
    out = {}
    for key, value in d.items():
        if isinstance(value, bool):
            out[key] = float(value)
        elif isinstance(value, (int, float)):
            out[key] = float(value)
        elif isinstance(value, dict):
            for k, v in value.items():
                if isinstance(v, (int, float)) and not isinstance(v, bool):
                    out[f"{key}.{k}"] = float(v)
    return out


def flat_result(result) -> dict[str, float]:
    """A model result as a study's flat numbers (``flatten``), without its run time, with
    ``out_of_depth``: how many reasons the linear model gives for being out of its depth
    (models.checks.out_of_depth; 0: none), which the study's design rule reads."""
    flat = flatten(result.to_dict())
    flat.pop("run_time_s", None)
    flat["out_of_depth"] = float(len(result.out_of_depth))
    return flat
