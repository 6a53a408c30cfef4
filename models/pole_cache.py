"""The magnetised pole's model, kept between evaluations: what it depends on
(``pole_model_key``), the model itself (``pole_model_for``) and the cache of the last few
geometries and permeabilities (``clear_pole_cache`` forgets them)."""

from __future__ import annotations

import functools

import numpy as np

from models.design import Design
from models.fast.discretize import Fineness, resolved_gap

__all__ = ["DEFAULT_FINENESS", "clear_pole_cache", "pole_model_for", "pole_model_key"]

#: The discretisation an evaluation takes unless told otherwise.
DEFAULT_FINENESS = Fineness()


def _panel_size(design: Design, fineness: Fineness) -> float:
    """Iron panel size at the face [m]: a fraction of the smallest feature near it."""
    gap = resolved_gap(design.target.gap, design.pole.radius, fineness)
    features = [design.pole.radius, 2.0 * gap, design.target.radius]
    if design.ring is not None:
        features += [design.ring.width, design.ring.depth, design.ring.inner_radius]
    return fineness.panel_size * min(features)


def pole_model_for(design: Design, fineness: Fineness):
    """The magnetised-pole model of ``design`` (None if the pole is not magnetic).

    The model depends on the pole's radius and length, the groove (ring radii and depth), the
    panel size and the pole's permeability at the design's frequency (complex for a laminated
    stack with sheet data), not on drive, coil or target material. The panels and their field
    matrix (the costly part, geometry only) are kept for the last few geometries
    (``_cached_pole_geometry``), the factorised model for the last few (geometry,
    permeability) pairs (``_cached_pole_model``), so that sweeps and studies over frequency and
    the rest reuse them. The same object is returned for equal keys; treat it as read-only.
    """
    key = pole_model_key(design, fineness)
    return None if key is None else _cached_pole_model(*key)


def pole_model_key(design: Design, fineness: Fineness | None = None):
    """What the pole model of ``design`` depends on (``pole_model_for``): (pole radius [m], pole
    length [m], relative permeability at the drive frequency (complex for a laminated stack with
    sheet data), groove (ring inner radius, outer radius, depth [m]) or None, panel size [m]);
    None when the pole is not magnetic. Designs with equal keys share one model; callers that
    evaluate many designs can order them by it to reuse the kept ones."""
    if design.pole is None or design.pole.relative_permeability <= 1.0:
        return None
    p, g = design.pole, design.ring
    groove = None if g is None else (g.inner_radius, g.outer_radius, g.depth)
    return (
        float(p.radius),
        float(p.length),
        complex(p.effective_permeability(design.drive.frequency)),
        None if groove is None else tuple(float(x) for x in groove),
        float(_panel_size(design, fineness or DEFAULT_FINENESS)),
    )


@functools.lru_cache(maxsize=8)
def _cached_pole_model(radius, length, relative_permeability, groove, panel_size):
    """MagnetisedPole of a pole (radius, length [m], relative permeability, complex or real) with
    the groove (inner radius, outer radius, depth [m]) or None, meshed with ``panel_size`` [m]."""
    geometry = _cached_pole_geometry(radius, length, groove, panel_size)
    mu = relative_permeability.real if relative_permeability.imag == 0.0 else relative_permeability
    model = geometry.with_permeability(mu)
    # Shared between callers: lock the arrays so that an accidental in-place change fails loudly.
    for a in (model.matrix, *model._lu):
        if isinstance(a, np.ndarray):
            a.setflags(write=False)
    return model


@functools.lru_cache(maxsize=8)
def _cached_pole_geometry(radius, length, groove, panel_size):
    """Panels and field matrix of a pole geometry (a MagnetisedPole at mu_r = 2, whose
    ``with_permeability`` gives the model at any permeability). build_panels reads only these
    fields of the pole and the ring, so they stand in for the design's dataclasses here."""
    from types import SimpleNamespace

    from models.fast.pole import MagnetisedPole, build_panels

    pole = SimpleNamespace(radius=radius, length=length)
    ring = None
    if groove is not None:
        ring = SimpleNamespace(inner_radius=groove[0], outer_radius=groove[1], depth=groove[2])
    model = MagnetisedPole(build_panels(pole, ring, panel_size=panel_size), 2.0)
    for a in (*vars(model.panels).values(), model.field_matrix):
        if isinstance(a, np.ndarray):
            a.setflags(write=False)
    return model


def clear_pole_cache():
    """Forget the kept pole models (``pole_model_for``), e.g. to time a cold evaluation."""
    _cached_pole_model.cache_clear()
    _cached_pole_geometry.cache_clear()
