"""Step 4 of reading a design, and reading one from a dict or a TOML file."""

from __future__ import annotations

import tomllib
from pathlib import Path

from models.design.geometry import (
    _check_geometry,
)
from models.design.parts import (
    MM,
    Coil,
    Design,
    Drive,
    Pole,
    Ring,
    Supply,
    Target,
    ThermalSettings,
    coil_fill,
    coil_turns,
)
from models.design.schema import (
    _check_schema,
    _Values,
)
from models.design.tables import (
    _PARSERS,
    design_notes,
)
from models.errors import DesignError

# --- step 4: the build


def _build(data: dict, name: str, vals: dict[str, _Values], parsed: dict[str, dict]) -> Design:
    """Step 4, for a design without problems: the dataclasses in SI from the checked sizes (mm)
    and the parsed tables."""
    p, g, r = vals.get("pole"), vals["target"], vals.get("ring")
    pole = None
    if p is not None:
        pole = Pole(radius=p["radius_mm"] * MM, length=p["length_mm"] * MM, **parsed["pole"])
    coils = ()
    if "coils" in parsed:
        from models.coils import build_coils

        coils = build_coils(vals["coils"], parsed["coils"])
        coil = coils[0]
    else:
        c = vals["coil"]
        coil = Coil(
            inner_radius=c["inner_radius_mm"] * MM,
            outer_radius=c["outer_radius_mm"] * MM,
            setback=c["setback_mm"] * MM,
            length=c["length_mm"] * MM,
            turns=coil_turns(c),
            wire_diameter=c["wire_diameter_mm"] * MM if "wire_diameter_mm" in c else None,
            fill_factor=coil_fill(c),
            **parsed["coil"],
        )
    ring = None
    if r is not None:
        ring = Ring(
            inner_radius=r["inner_radius_mm"] * MM,
            outer_radius=r["outer_radius_mm"] * MM,
            depth=r["depth_mm"] * MM,
            **parsed["ring"],
        )
    target = Target(
        radius=g["radius_mm"] * MM,
        thickness=g["thickness_mm"] * MM,
        gap=g["gap_mm"] * MM,
        inner_radius=g.get("inner_radius_mm", 0.0) * MM,
        offset=g.get("offset_mm", 0.0) * MM,
        **parsed["target"],
    )
    return Design(
        pole=pole,
        coil=coil,
        drive=Drive(**parsed["drive"]),
        target=target,
        ring=ring,
        name=str(data.get("name", name)),
        source=_deep_copy(data),
        thermal=ThermalSettings(**parsed["thermal"]) if "thermal" in parsed else ThermalSettings(),
        supply=Supply(**parsed["supply"]) if "supply" in parsed else None,
        notes=design_notes(vals),
        coils=coils,
    )


def design_from_dict(data: dict, name: str = "design") -> Design:
    """Build and validate a design from a dict in file units (mm, Hz, A rms, V rms).

    Raises
    ------
    DesignError
        With one line per violation, every violation of the file at once: the field, the value
        and what is allowed.
    """
    if not isinstance(data, dict):
        raise DesignError(f"design = {data!r}: must be a table of tables")
    from models.coils import check_coils, coils_fit_pole, parse_coil_materials

    problems: list[str] = []
    vals = _check_schema(data, problems)
    parsed = {t: parse(vals[t], problems) for t, parse in _PARSERS.items() if t in vals}
    coils = check_coils(data, problems)
    if coils is not None:
        vals["coils"] = coils
        parsed["coils"] = parse_coil_materials(coils, problems)
        if "pole" in vals:
            coils_fit_pole(coils, vals["pole"], problems)
    if "ring" in data and "pole" not in data:
        problems.append(
            "[pole]: missing table; the [ring] sits in a groove of the pole's face (an air "
            "core, without [pole], has no [ring])"
        )
    _check_geometry(vals, problems)
    if problems:
        raise DesignError(problems)
    return _build(data, name, vals, parsed)


def _deep_copy(data: dict) -> dict:
    return {
        k: (
            _deep_copy(v)
            if isinstance(v, dict)
            else [_deep_copy(x) if isinstance(x, dict) else x for x in v]
            if isinstance(v, list)
            else v
        )
        for k, v in data.items()
    }


def read_toml(path, what: str = "file") -> dict:
    """The table of a TOML file, or a one-line DesignError naming ``what`` and the path.

    Every way a file can be unreadable ends here: missing, a directory, not UTF-8, not TOML, an
    integer of more than 4300 digits (Python's int limit), arrays or tables nested past the
    parser's recursion limit.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as err:
        raise DesignError(f"{what} {str(path)!r}: cannot be read ({err.strerror})") from None
    except UnicodeDecodeError as err:
        raise DesignError(
            f"{what} {str(path)!r}: not UTF-8 text (byte {err.start}); must be a TOML file"
        ) from None
    try:
        return tomllib.loads(text)
    except ValueError as err:  # TOMLDecodeError, or an integer of more than 4300 digits
        reason = str(err).splitlines()[0] if str(err) else type(err).__name__
        raise DesignError(f"{what} {str(path)!r}: not valid TOML ({reason})") from None
    except RecursionError:
        raise DesignError(
            f"{what} {str(path)!r}: not valid TOML (arrays or tables nested too deeply)"
        ) from None


def load_design(path) -> Design:
    """Read and validate a design TOML file (mm, Hz, A rms, V rms).

    Raises
    ------
    DesignError
        The file is missing, not TOML, or breaks a rule (one line per violation).

    Examples
    --------
    The demo design that ships with the package:

    >>> from optim.demo import DEMO_DESIGN
    >>> design = load_design(DEMO_DESIGN)
    >>> design.name, design.source["target"]["gap_mm"]
    ('harrowgate-cap-lifter', 3.0)
    """
    path = Path(path)
    data = read_toml(path, "design file")
    return design_from_dict(data, name=path.stem)
