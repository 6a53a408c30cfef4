"""Fast model against the reference FEM, side by side: the pure functions behind ``eddypull verify``.

Typical use (the CLI wiring lives in optim/cli.py)::

    from models.fem.reference import reference
    ref = reference(design)                       # FEM, finest run + its own uncertainty
    rows = compare(fast_result, ref.result, ref.uncertainty)
    print(format_table(rows, ref.run_time_s, fast_time_s))
    json_dict = to_json(rows, ref.run_time_s, fast_time_s, reference_result=ref)

The fast model's result dict uses the FEM's names (pull_N, target_loss_W, ring_loss_W, coil_loss_W,
coil_current_A, coil_voltage_V, coil_impedance_ohm, ring_current_A, ring_phase_deg); magnitudes for
currents and voltage, the impedance as [re, im] or a complex number, split here into ``.re``/``.im`` rows.
"""

from __future__ import annotations

import math
import time

from models.errors import DesignError
from models.evaluate import evaluate
from optim.words import CAUTION

__all__ = ["QUANTITIES", "compare", "format_table", "to_json", "run_verify"]

#: (key, unit, label) of the compared quantities, in table order.
QUANTITIES = (
    ("pull_N", "N", "pull"),
    ("target_loss_W", "W", "target loss"),
    ("ring_loss_W", "W", "ring loss"),
    ("pole_loss_W", "W", "pole loss"),
    ("core_loss_W", "W", "core loss (laminated)"),
    ("core_eddy_loss_W", "W", "  sheets' eddy loss"),
    ("coil_loss_W", "W", "coil loss"),
    ("input_power_W", "W", "input power Re(V I*)"),
    ("coil_current_A", "A", "coil current |I|"),
    ("coil_voltage_V", "V", "coil voltage |V|"),
    ("coil_impedance_ohm.re", "Ohm", "coil resistance Re Z"),
    ("coil_impedance_ohm.im", "Ohm", "coil reactance Im Z"),
    ("ring_current_A", "A", "ring current |I_r|"),
    ("ring_phase_deg", "deg", "ring phase to coil"),
    ("pole_flux_density_T", "T", "pole mean flux density"),
)


#: The compared fields that are complex (a phasor or an impedance): split into ``.re``/``.im``.
#: Decoded by name, never by shape: a result also carries lists (its warnings, its thermal time
#: constants) that are not complex numbers.
COMPLEX_FIELDS = frozenset(key[: -len(".re")] for key, _, _ in QUANTITIES if key.endswith(".re"))


def _complex_parts(key: str, value) -> tuple[float, float]:
    """(re, im) of a complex field given as a complex number or a [re, im] pair."""
    if isinstance(value, complex):
        return value.real, value.imag
    if isinstance(value, (list, tuple)) and len(value) == 2:
        return float(value[0]), float(value[1])
    if value is None:
        return math.nan, math.nan
    raise ValueError(
        f"{key} must be a complex number or a [re, im] pair; instead received {value!r}"
    )


def _scalars(d) -> dict:
    """Flattened float view of a result (dict or object with ``to_dict``).

    The fields in `COMPLEX_FIELDS` become ``.re``/``.im`` pairs; other numbers are kept; None is
    nan; every other field (texts, lists such as the warnings) is not a compared quantity and is
    left out.
    """
    if hasattr(d, "to_dict"):
        d = d.to_dict()
    out = {}
    for key, value in d.items():
        if key in COMPLEX_FIELDS:
            out[key + ".re"], out[key + ".im"] = _complex_parts(key, value)
        elif isinstance(value, (int, float)) and not isinstance(value, bool):
            out[key] = float(value)
        elif value is None:
            out[key] = math.nan
    return out


def compare(
    fast: dict | None, fem_result, uncertainty: dict, uncertainty_abs: dict | None = None
) -> list[dict]:
    """Rows of the fast model against the FEM, one per quantity present in both.

    Parameters
    ----------
    fast : dict or None
        Fast-model result (SI; keys as in `QUANTITIES`, impedance [re, im] or complex); None when
        the fast model does not cover the design (solid pole): FEM-only rows, fast = nan.
    fem_result : models.fem.results.FemResult or dict
        Reference result (``FemResult`` or its ``to_dict()``).
    uncertainty : dict
        Relative FEM uncertainty [-] per flattened key (``ReferenceResult.uncertainty``); missing
        keys give nan.
    uncertainty_abs : dict, optional
        The same in each quantity's unit (``ReferenceResult.uncertainty_abs``): the phase's
        uncertainty is read from it, in degrees.

    Returns
    -------
    list of dict
        Each row: key, label, unit, fast, fem, difference (fast - fem, in the unit; the phase wrapped
        to (-180, 180] deg), difference_rel (difference / |fem|, nan if fem = 0 and for the phase,
        whose difference is in degrees only), uncertainty_rel
        and within_uncertainty (|difference_rel| <= uncertainty_rel: the difference is not resolved
        by the reference).
    """
    r = _scalars(fem_result)
    f = _scalars(fast) if fast is not None else {k: math.nan for k in r}
    rows = []
    for key, unit, label in QUANTITIES:
        if key not in f or key not in r:
            continue
        a, b = f[key], r[key]
        diff = a - b
        if key == "ring_phase_deg" and not math.isnan(diff):
            diff = (diff + 180.0) % 360.0 - 180.0
        if math.isnan(diff) or key == "ring_phase_deg":  # a percentage of a phase means nothing
            rel = math.nan
        elif b != 0.0:
            rel = diff / abs(b)
        else:
            rel = 0.0 if diff == 0.0 else math.nan
        unc = float(uncertainty.get(key, math.nan))
        within = bool(abs(rel) <= unc) if not math.isnan(rel + unc) else False
        if key == "ring_phase_deg":  # in degrees: a relative uncertainty of a phase means nothing
            unc = math.nan
            unc_deg = float((uncertainty_abs or {}).get(key, math.nan))
            within = bool(abs(diff) <= unc_deg) if not math.isnan(diff + unc_deg) else False
        rows.append(
            {
                "key": key,
                "label": label,
                "unit": unit,
                "fast": a,
                "fem": b,
                "difference": diff,
                "difference_rel": rel,
                "uncertainty_rel": unc,
                "within_uncertainty": within,
            }
        )
        if key == "ring_phase_deg":
            rows[-1]["uncertainty_deg"] = unc_deg
    return rows


#: Above this pull_cancellation (the net pull under a tenth of the sum of its terms), a small
#: relative error of a term is a large one of the net (common practice, no source).
CANCELLATION_WARNING = 10.0


def cancellation_line(cancellation: float) -> str:
    """The pull's cancellation in words: sum of |terms| / |net| and what it means for trust."""
    text = f"pull_cancellation {cancellation:.3g} (sum of the pull terms' magnitudes / |net pull|)"
    if not cancellation <= CANCELLATION_WARNING:
        text += (
            ": the net pull is a small difference of large terms, so its size is uncertain "
            "here; its sign is what to trust"
        )
    return text


def _num(x: float) -> str:
    return "-" if math.isnan(x) else f"{x:.5g}"


def _pct(x: float) -> str:
    return "-" if math.isnan(x) else f"{100.0 * x:+.2f} %"


def format_table(rows: list[dict], fem_time_s: float, fast_time_s: float) -> str:
    """Plain-text table: quantity, unit, fast, FEM, difference [%], FEM uncertainty [%], and timings.

    The phase row shows its difference in degrees (a percentage of a phase means nothing).
    """
    header = ("quantity", "unit", "fast", "FEM", "difference", "FEM uncertainty")
    body = []
    for row in rows:
        diff = _pct(row["difference_rel"])
        if row["key"] == "ring_phase_deg":
            diff = "-" if math.isnan(row["difference"]) else f"{row['difference']:+.2f} deg"
        unc = row["uncertainty_rel"]
        unc_text = "-" if math.isnan(unc) else f"{100.0 * unc:.2g} %"
        if row["key"] == "ring_phase_deg":
            unc_deg = row.get("uncertainty_deg", math.nan)
            unc_text = "-" if math.isnan(unc_deg) else f"{unc_deg:.2g} deg"
        body.append(
            (
                row["label"],
                row["unit"],
                _num(row["fast"]),
                _num(row["fem"]),
                diff,
                unc_text,
            )
        )
    widths = [max(len(str(line[i])) for line in [header, *body]) for i in range(len(header))]

    def fmt(line):
        return "  ".join(
            str(c).ljust(w) if i < 2 else str(c).rjust(w)
            for i, (c, w) in enumerate(zip(line, widths, strict=True))
        )

    lines = [fmt(header), "  ".join("-" * w for w in widths), *(fmt(b) for b in body)]
    lines.append("")
    if math.isnan(fast_time_s) or fast_time_s <= 0.0:
        lines.append(f"FEM reference {fem_time_s:.2f} s (3 solves: 2 meshes, 2 far boundaries)")
    else:
        lines.append(
            f"FEM reference {fem_time_s:.2f} s (3 solves: 2 meshes, 2 far boundaries), "
            f"fast model {1e3 * fast_time_s:.2f} ms ({fem_time_s / fast_time_s:.3g} x faster)"
        )
    return "\n".join(lines)


def to_json(
    rows: list[dict],
    fem_time_s: float,
    fast_time_s: float,
    reference_result=None,
    design_name: str | None = None,
) -> dict:
    """JSON-ready dict of the comparison (nan -> None).

    Parameters
    ----------
    rows : list of dict
        From `compare`.
    fem_time_s, fast_time_s : float
        Wall times [s].
    reference_result : models.fem.reference.ReferenceResult, optional
        Adds the reference's full output (runs, mesh and domain changes).
    design_name : str, optional
    """

    def clean(v):
        if isinstance(v, float) and math.isnan(v):
            return None
        if isinstance(v, dict):
            return {k: clean(x) for k, x in v.items()}
        if isinstance(v, list):
            return [clean(x) for x in v]
        return v

    out = {
        "design": design_name,
        "fem_time_s": float(fem_time_s),
        "fast_time_s": None if math.isnan(fast_time_s) else float(fast_time_s),
        "rows": clean([dict(r) for r in rows]),
    }
    if reference_result is not None:
        out["reference"] = clean(reference_result.to_dict())
    return out


def run_verify(design, refine: float = 1.0, far_factor: float = 1.0) -> dict:
    """Run the fast model and the FEM reference on one design and compare them.

    Parameters
    ----------
    design : models.design.Design
    refine, far_factor : float
        Coarse level of the FEM refinement study (see `models.fem.reference.reference`).

    Returns
    -------
    dict
        ``text`` (the table), ``json`` (`to_json`), ``rows`` and ``reference``
        (`models.fem.reference.ReferenceResult`). When the fast model refuses the design (a solid pole) the
        table is FEM-only and ``json["fast_error"]`` gives its reason.
    """

    from models.fem.reference import reference

    fast, fast_error, fast_time = None, None, math.nan
    try:
        t0 = time.perf_counter()
        fast = evaluate(design, isothermal=True).to_dict()  # the FEM runs at 20 degC
        fast_time = time.perf_counter() - t0
    except DesignError as err:
        fast_error = str(err)
    ref = reference(design, refine=refine, far_factor=far_factor)
    rows = compare(fast, ref.result, ref.uncertainty, ref.uncertainty_abs)

    text = (
        f"design {design.name}: both models at 20 degC (every resistivity at 20 degC, no thermal "
        "coupling)\n" + format_table(rows, ref.run_time_s, fast_time) + "\n"
    )
    if fast is not None:
        text += cancellation_line(fast["pull_cancellation"]) + "\n"
    text += CAUTION
    if fast_error:
        text = f"fast model: {fast_error}\n" + text
    out = to_json(rows, ref.run_time_s, fast_time, reference_result=ref, design_name=design.name)
    out["fast_error"] = fast_error
    out["temperature_C"] = 20.0
    out["pull_cancellation"] = None if fast is None else fast["pull_cancellation"]
    return {"text": text, "json": out, "rows": rows, "reference": ref}
