"""Vessel volumes, liquid heights and wetted areas.

References:
* the ``fluids`` library, called directly here (``fluids.geometry.TANK``, ``V_partial_sphere``,
  ``SA_partial_sphere``) with the head proportions stated in each test;
* hand formulas (standard mensuration): cylinder V = pi D^2 L / 4, A = pi D L + 2 pi D^2 / 4; sphere
  V = pi D^3 / 6, A = pi D^2, cap volume pi h^2 (3R - h) / 3, cap area 2 pi R h; circular segment area
  R^2 acos((R - h)/R) - (R - h) sqrt(2 R h - h^2) and arc D acos(1 - 2h/D); hemispherical heads (a sphere
  split in two); 2:1 semi-ellipsoidal heads (an oblate spheroid of semi-axes R, R, D/4 split in two:
  V = 4/3 pi R^2 (D/4), A = 2 pi R^2 (1 + (1 - e^2)/e artanh e), e = sqrt(1 - (D/4)^2 / R^2)); boxes.
"""
from __future__ import annotations

import math

import pytest
from fluids.geometry import SA_partial_sphere, TANK, V_partial_sphere

from screening.core.vessel_geometry import (VesselShape, conduction_shape, liquid_height, liquid_volume_at_height, maximum_height, total_area, total_volume, wetted_area, wetted_area_below)

D, L = 2.2, 3.4
FILLS = (0.05, 0.3, 0.5, 0.77, 0.98)


def fluids_tank(shape: str, heads: str, crown=None, knuckle=None) -> TANK:
    """The fluids TANK for a shape/head pair, built here from fluids' own parameters."""
    horizontal = shape == "horizontal-cylinder"
    if heads == "flat":
        return TANK(D=D, L=L, horizontal=horizontal)
    if heads == "hemispherical":
        return TANK(D=D, L=L, horizontal=horizontal, sideA="spherical", sideB="spherical", sideA_a=D / 2,
                    sideB_a=D / 2)
    if heads == "ellipsoidal":  # 2:1 semi-ellipsoidal: depth D/4 (common practice)
        return TANK(D=D, L=L, horizontal=horizontal, sideA="ellipsoidal", sideB="ellipsoidal", sideA_a=D / 4,
                    sideB_a=D / 4)
    f = (crown / D) if crown else 1.0  # flanged-and-dished default: crown = D, knuckle = 0.06 D (common practice)
    k = (knuckle / D) if knuckle else 0.06
    return TANK(D=D, L=L, horizontal=horizontal, sideA="torispherical", sideB="torispherical", sideA_f=f,
                sideA_k=k, sideB_f=f, sideB_k=k)


CYLINDERS = [(s, h) for s in ("vertical-cylinder", "horizontal-cylinder")
             for h in ("flat", "hemispherical", "ellipsoidal", "torispherical")]


@pytest.mark.parametrize("shape,heads", CYLINDERS)
def test_cylinders_against_fluids_tank(shape, heads):
    v = VesselShape(shape, diameter=D, length=L, heads=heads)
    tank = fluids_tank(shape, heads)
    assert total_volume(v) == pytest.approx(tank.V_total, rel=1e-12)
    assert total_area(v) == pytest.approx(tank.A, rel=1e-12)
    assert maximum_height(v) == pytest.approx(tank.h_max, rel=1e-12)
    for frac in FILLS:
        # fluids' exact V(h) and SA(h) at a chosen height (its default h_from_V is a spline, ~1e-5 off)
        h = frac * tank.h_max
        V = tank.V_from_h(h)
        assert liquid_height(v, V) == pytest.approx(h, rel=1e-9)
        assert wetted_area(v, V) == pytest.approx(tank.SA_from_h(h), rel=1e-9)
        # fluids' horizontal torispherical V(h) is an adaptive quadrature, 5e-12 off the mpmath value at
        # some heights (tests/core/test_geometry_arrays.py checks ours against mpmath to 1e-9, found 1e-15)
        assert liquid_volume_at_height(v, h) == pytest.approx(V, rel=1e-10)
        assert h == pytest.approx(tank.h_from_V(V, method="brenth"), rel=1e-9)  # fluids' own exact inverse


def test_torispherical_with_given_radii_against_fluids():
    crown, knuckle = 2.0, 0.2
    for shape in ("vertical-cylinder", "horizontal-cylinder"):
        v = VesselShape(shape, diameter=D, length=L, heads="torispherical", crown_radius=crown,
                        knuckle_radius=knuckle)
        tank = fluids_tank(shape, "torispherical", crown, knuckle)
        assert total_volume(v) == pytest.approx(tank.V_total, rel=1e-12)
        assert total_area(v) == pytest.approx(tank.A, rel=1e-12)
        h = 0.6 * tank.h_max
        # lying down, fluids' wetted area here is a double adaptive quadrature (with IntegrationWarnings),
        # 5e-9 off the mpmath value; ours agrees with mpmath to 1e-15 (tests/core/test_geometry_arrays.py)
        rel = 1e-7 if shape == "horizontal-cylinder" else 1e-9
        assert wetted_area(v, tank.V_from_h(h)) == pytest.approx(tank.SA_from_h(h), rel=rel)


def test_sphere_against_fluids_partial_sphere_and_cap_formulas():
    Ds = 3.0
    R = Ds / 2
    v = VesselShape("sphere", diameter=Ds)
    assert total_volume(v) == pytest.approx(math.pi * Ds ** 3 / 6, rel=1e-14)
    assert total_area(v) == pytest.approx(math.pi * Ds ** 2, rel=1e-14)
    for h in (0.1, 0.9, 1.5, 2.4, 2.95):
        V = math.pi * h ** 2 * (3 * R - h) / 3  # spherical cap (hand formula)
        assert V == pytest.approx(V_partial_sphere(Ds, h), rel=1e-12)  # fluids agrees with the hand formula
        assert liquid_height(v, V) == pytest.approx(h, rel=1e-9)
        assert wetted_area(v, V) == pytest.approx(SA_partial_sphere(Ds, h), rel=1e-9)
        assert wetted_area(v, V) == pytest.approx(2 * math.pi * R * h, rel=1e-9)  # cap area 2 pi R h


def test_flat_cylinders_against_hand_formulas():
    R = D / 2
    vert = VesselShape("vertical-cylinder", diameter=D, length=L)
    horiz = VesselShape("horizontal-cylinder", diameter=D, length=L)
    V_full = math.pi * D ** 2 / 4 * L
    A_full = math.pi * D * L + 2 * math.pi * D ** 2 / 4
    for v in (vert, horiz):
        assert total_volume(v) == pytest.approx(V_full, rel=1e-14)
        assert total_area(v) == pytest.approx(A_full, rel=1e-14)
    # vertical: bottom disc + wetted side
    for h in (0.2, 1.7, 3.1):
        V = math.pi * D ** 2 / 4 * h
        assert liquid_height(vert, V) == pytest.approx(h, rel=1e-10)
        assert wetted_area(vert, V) == pytest.approx(math.pi * D ** 2 / 4 + math.pi * D * h, rel=1e-10)
    # horizontal: two circular segments as ends, wetted arc along the length
    for h in (0.15, 0.8, 1.1, 1.9):
        seg = R ** 2 * math.acos((R - h) / R) - (R - h) * math.sqrt(2 * R * h - h * h)
        V = seg * L
        assert liquid_height(horiz, V) == pytest.approx(h, rel=1e-9)
        assert wetted_area(horiz, V) == pytest.approx(2 * seg + L * D * math.acos(1 - 2 * h / D), rel=1e-9)


def test_hemispherical_and_ellipsoidal_heads_against_hand_formulas():
    R = D / 2
    hemi = VesselShape("vertical-cylinder", diameter=D, length=L, heads="hemispherical")
    assert total_volume(hemi) == pytest.approx(math.pi * D ** 2 / 4 * L + math.pi * D ** 3 / 6, rel=1e-12)
    assert total_area(hemi) == pytest.approx(math.pi * D * L + math.pi * D ** 2, rel=1e-12)
    assert maximum_height(hemi) == pytest.approx(L + D, rel=1e-14)
    # partial fill inside the bottom hemisphere, then into the shell
    h = 0.4
    V = math.pi * h ** 2 * (3 * R - h) / 3
    assert wetted_area(hemi, V) == pytest.approx(2 * math.pi * R * h, rel=1e-9)
    h = R + 1.3
    V = 2 / 3 * math.pi * R ** 3 + math.pi * R ** 2 * 1.3
    assert wetted_area(hemi, V) == pytest.approx(2 * math.pi * R ** 2 + math.pi * D * 1.3, rel=1e-9)

    ell = VesselShape("horizontal-cylinder", diameter=D, length=L, heads="ellipsoidal")
    c = D / 4
    e = math.sqrt(1 - c ** 2 / R ** 2)
    spheroid_V = 4 / 3 * math.pi * R ** 2 * c
    spheroid_A = 2 * math.pi * R ** 2 * (1 + (1 - e ** 2) / e * math.atanh(e))
    assert total_volume(ell) == pytest.approx(math.pi * D ** 2 / 4 * L + spheroid_V, rel=1e-12)
    assert total_area(ell) == pytest.approx(math.pi * D * L + spheroid_A, rel=1e-6)
    assert maximum_height(ell) == pytest.approx(D, rel=1e-14)
    # half full: half of everything (symmetry)
    assert wetted_area(ell, total_volume(ell) / 2) == pytest.approx(total_area(ell) / 2, rel=1e-9)


def test_box_against_hand_formulas():
    v = VesselShape("box", length=2.0, width=3.0, height=4.0)
    assert total_volume(v) == 24.0
    assert total_area(v) == 52.0
    assert maximum_height(v) == 4.0
    for h in (0.5, 2.0, 3.9):
        V = 6.0 * h
        assert liquid_height(v, V) == pytest.approx(h, rel=1e-14)
        assert wetted_area(v, V) == pytest.approx(6.0 + 2 * (2.0 + 3.0) * h, rel=1e-14)
    # brim-full: every face, the lid included (as fluids gives for full cylinders: TANK.SA_from_h(h_max) = A)
    assert wetted_area(v, 24.0) == pytest.approx(52.0, rel=1e-14)


def test_full_vessels_wet_their_whole_surface():
    # At 100 % fill every wall is in contact with the liquid (the same convention fluids uses for TANK).
    shapes = [VesselShape(s, diameter=D, length=L, heads=h) for s, h in CYLINDERS]
    shapes += [VesselShape("sphere", diameter=D), VesselShape("box", length=1.0, width=2.0, height=3.0)]
    for v in shapes:
        assert wetted_area(v, total_volume(v)) == pytest.approx(total_area(v), rel=1e-12)
        assert wetted_area(v, 1.5 * total_volume(v)) == pytest.approx(total_area(v), rel=1e-12)  # over-full: capped
        assert liquid_height(v, 1.5 * total_volume(v)) == pytest.approx(maximum_height(v), rel=1e-14)
        assert liquid_height(v, 0.0) == 0.0


def test_wetted_area_below_a_height_for_fire_exposure():
    # Vertical flat cylinder filled to 3 m; only the wall up to 1.2 m counts: disc + pi D 1.2 (hand formula).
    v = VesselShape("vertical-cylinder", diameter=D, length=L)
    V = math.pi * D ** 2 / 4 * 3.0
    assert wetted_area_below(v, V, 1.2) == pytest.approx(math.pi * D ** 2 / 4 + math.pi * D * 1.2, rel=1e-9)
    assert wetted_area_below(v, V, 10.0) == pytest.approx(wetted_area(v, V), rel=1e-12)  # capped at the liquid
    assert wetted_area_below(v, V, 0.0) == 0.0


def test_conduction_shape():
    # Conservative conduction geometries (module docstring): sphere radius D/2, infinite cylinder D/2,
    # slab half the smallest box dimension.
    assert conduction_shape(VesselShape("sphere", diameter=2.0)) == ("sphere", 1.0)
    assert conduction_shape(VesselShape("vertical-cylinder", diameter=2.0, length=5.0)) == ("cylinder", 1.0)
    assert conduction_shape(VesselShape("box", length=3.0, width=1.0, height=2.0)) == ("slab", 0.5)
    assert conduction_shape(None) is None
