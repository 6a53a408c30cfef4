"""The report's pick cards: one short table per picked design, every number with its state.

A pull means nothing without the gap and the moment it belongs to: ``pull_N`` is the part as it
arrives at the design's own gap, ``pull_hold_N`` the part after its hold at the holding gap,
``worst_pull_N`` the smallest of those over the study's gap range (``[robust]``) or over every
lift part of a family. Each card row names which, read from the trial's own row
(``gap_mm``, ``thermal_assumptions.*``) and the study's `CardStates`.
"""

from __future__ import annotations

import html
import math
import numbers
from dataclasses import dataclass

import pandas as pd

from models.result import field_names
from models.result import unit_of as result_unit_of
from optim.morning.handoff import unit_of

#: The model's result fields: their units come from the field table (models.result.FIELDS).
RESULT_NAMES = frozenset(field_names())

__all__ = ["CardStates", "pick_card", "pick_cards", "card_items"]


@dataclass(frozen=True)
class CardStates:
    """What the study's results were taken over (the same for every card of a report).

    gaps_mm : the ``[robust]`` gaps [mm] of ``worst_pull_N`` (empty: none)
    family : True for a study of ``[[parts]]`` (worst values over every lift part)
    isothermal : True when every part was evaluated at 20 degC (the temperatures not fed back)
    """

    gaps_mm: tuple = ()
    family: bool = False
    isothermal: bool = False


def _e(x) -> str:
    return html.escape(str(x), quote=True)


def _finite(v) -> bool:
    return isinstance(v, numbers.Real) and not isinstance(v, bool) and math.isfinite(float(v))


def card_value(name: str, v) -> str:
    """A value with its unit: millimetres to 0.01 mm, a pull under 1 N in mN, others to 4
    significant digits; a missing or non-finite value as '-' (a runaway's inf is not a number
    to read)."""
    if not _finite(v):
        return "-" if not isinstance(v, str) else v
    unit = result_unit_of(name) if name in RESULT_NAMES else unit_of(name)
    unit = unit or "-"
    if unit == "mm":
        return f"{float(v):.2f} mm"
    if unit == "N" and abs(float(v)) < 1.0:  # a lifter's pull reads in millinewtons
        return f"{1e3 * float(v):.4g} mN"
    return f"{float(v):.4g}" + ("" if unit == "-" else f" {unit}")


#: Rows a card shows only where the study gave them a value: the centring stiffness (asked for),
#: the lateral force (a part off the axis), the capacitor (a compensated drive).
_SHOWN_WHEN_GIVEN = frozenset(
    {"centring_stiffness_N_per_m", "lateral_force_N", "capacitor_rating_V"}
)


def _g(x) -> str:
    return f"{float(x):.2f}"


def _worst_words(row: pd.Series, states: CardStates, hold: str) -> str:
    """Over what a worst value is taken, in words."""
    if states.family:
        return "over every lift part and its gaps, arriving and " + hold
    g = states.gaps_mm
    if g:
        span = f"{g[0]:g}-{g[-1]:g} mm ({len(g)} gaps)" if len(g) > 1 else f"{g[0]:g} mm"
        return f"over {span} arriving, and {hold}"
    return f"arriving at {_g(row.get('gap_mm', math.nan))} mm, and {hold}"


def card_items(row: pd.Series, states: CardStates | None = None) -> list[tuple[str, str]]:
    """``(label, value)`` of one card: dimensions, searched materials, drive, pulls with their
    gap and state, power, temperatures with their state, the binding limit."""
    states = states or CardStates()
    gap = row.get("gap_mm", math.nan)
    at = f"at {_g(gap)} mm" if _finite(gap) else "at the design's gap"
    arrival = row.get("thermal_assumptions.target_arrival_C", math.nan)
    arriving = "arriving" + (f" at {float(arrival):g} degC" if _finite(arrival) else "")
    if states.isothermal:
        arriving = "all parts at 20 degC (isothermal run)"
    hold_s = row.get("thermal_assumptions.hold_time_s", math.nan)
    hold_gap = row.get("thermal_assumptions.hold_gap_mm", gap)
    hold = (f"after a {float(hold_s):g} s hold" if _finite(hold_s) else "after the hold") + (
        f" at {_g(hold_gap)} mm" if _finite(hold_gap) else ""
    )
    hold_words = f"at {_g(hold_gap)} mm" if _finite(hold_gap) else "at the holding gap"
    hold_words += ", the worse of arrival and the end of the hold"
    to_hold = f"to {_g(hold_gap)} mm" if _finite(hold_gap) else "to the holding gap"
    items: list[tuple[str, str]] = []
    for c in row.index:
        name = str(c)
        if name.endswith("_mm") and "." not in name:
            label = name[: -len("_mm")].replace("_", " ")
            if name == "gap_mm":
                label = "gap (the design's own)"
            items.append((label, card_value(name, row[c])))
    for c in row.index:  # a searched material (pole_material or "pole.material")
        if str(c).endswith("material") and isinstance(row[c], str):
            items.append((str(c).replace(".", " ").replace("_", " "), row[c]))
    worst = _worst_words(row, states, hold)
    rows = (
        ("frequency_Hz", "frequency"),
        ("current_A", "current (rms)"),
        ("voltage_V", "voltage (rms)"),
        ("pull_N", f"pull {at}, {arriving}"),
        ("lift_ratio", f"lift ratio {at}, {arriving}"),
        ("pull_hold_N", f"pull {hold}"),
        ("lift_ratio_hold", f"lift ratio {hold}"),
        ("worst_pull_N", f"worst pull {worst}"),
        ("worst_lift_ratio", f"worst lift ratio {worst}"),
        ("input_power_W", f"input power while on, {at}"),
        ("core_loss_W", f"core loss while on, {at}"),
        ("pull_uncertainty_relative", f"pull error bar (relative) {at}"),
        ("pull_ripple_N", f"pull's swing at twice the frequency {at}, {arriving}"),
        ("hold_chatter_margin_N", f"chatter margin (pull - swing - weight) held {hold_words}"),
        ("pick_time_ms", f"lift time from {_g(gap) if _finite(gap) else 'the gap'} mm {to_hold}"),
        ("contact_speed_m_per_s", f"speed at contact {to_hold}"),
        ("centring_stiffness_N_per_m", f"centring stiffness at the axis {at} (> 0: drawn in)"),
        ("lateral_force_N", f"lateral force at the design's offset {at}, {arriving}"),
        ("supply_voltage_V", "supply voltage (rms)"),
        ("capacitor_rating_V", "capacitor rated for (rms, its worst state)"),
    )
    for name, label in rows:
        if name not in row.index:
            continue
        value = row[name]
        if name in _SHOWN_WHEN_GIVEN and (not _finite(value) or value == 0):
            continue  # not asked for (nan), or nothing to say (no offset, no capacitor)
        items.append((label, card_value(name, value)))
    items += _temperature_items(row, states, hold)
    limit = row.get("binding_limit", "")
    items.append(("binding limit", limit if isinstance(limit, str) and limit else "none"))
    return items


def _temperature_items(row: pd.Series, states: CardStates, hold: str) -> list[tuple[str, str]]:
    """The temperatures, each with its state: the magnet's parts at their duty-averaged steady
    state, the part on arrival, after its hold, and were it to stay under the pole."""
    if states.isothermal:
        return [
            (
                "temperatures",
                "not computed with feedback: isothermal run, every resistivity at 20 degC",
            )
        ]
    words = {
        "target_arrival_temperature_C": "part temperature on arrival",
        "target_hold_temperature_C": f"part temperature {hold}",
        "target_temperature_C": "part temperature were it to stay under the pole (steady state)",
    }
    items = []
    for c in row.index:
        name = str(c)
        if name.endswith("temperature_C") and "." not in name:
            label = words.get(name)
            if label is None:
                part = name[: -len("_temperature_C")].replace("_", " ")
                label = f"{part} temperature (duty-averaged steady state)"
            items.append((label, card_value(name, row[c])))
    return items


def pick_card(why: str, row: pd.Series, states: CardStates | None = None) -> str:
    """One pick: its trial and why it was picked, then `card_items` as a two-column table."""
    rows = "".join(
        f'<tr><th class="text">{_e(k)}</th><td>{_e(v)}</td></tr>'
        for k, v in card_items(row, states)
    )
    return (
        f'<div class="card"><h3>Trial {_e(int(row["trial"]))}: {_e(why)}</h3>'
        f"<table><tbody>{rows}</tbody></table></div>"
    )


def pick_cards(front: pd.DataFrame, picks, states: CardStates | None = None) -> str:
    """The cards of the picked trials ``(why, trial)`` found in the front, in order."""
    cards = []
    for why, trial in picks:
        if "trial" in front.columns:
            match = front[front["trial"] == trial]
            if len(match):
                cards.append(pick_card(why, match.iloc[0], states))
    return f'<div class="picks">{"".join(cards)}</div>' if cards else ""
