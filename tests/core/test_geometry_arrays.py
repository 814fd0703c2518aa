"""Vessel geometry on arrays, row by row against independent references.

References:
* mpmath (arbitrary-precision quadrature, tanh-sinh, 30 digits) of a formulation independent of
  the module's: vertical vessels as solids of revolution sliced across the axis (V = int pi rho(z)^2 dz,
  A = int 2 pi sqrt(rho^2 + (rho rho')^2) dz); horizontal heads sliced along the axis (V = int of the
  circular segment of radius r(x) below the liquid, A = int 2 acos(-y0 / r) sqrt(r^2 + (r r')^2) dx),
  split where r(x) = |y0| and at the crown-knuckle junction.  The module integrates along the
  meridian by angle instead (shell method), or uses closed forms.
* the ``fluids`` library (``fluids.geometry.TANK``) where its formulas are closed forms: every vertical
  tank, and horizontal tanks' volumes with flat, hemispherical and ellipsoidal heads, wetted areas
  with flat heads.
* torispherical proportions: crown radius f D >= D/2, knuckle radius k D <= D/2 (geometry of the head:
  the knuckle is tangent to the shell and to the crown; ASME flanged-and-dished, from memory).
"""
from __future__ import annotations

import warnings

import mpmath as mp
import numpy as np
import pytest
from fluids.geometry import TANK

from screening.core.vessel_geometry_arrays import (
    VesselArrays,
    liquid_height,
    maximum_height,
    total_area,
    total_volume,
    volume_at_height,
    wetted_area_at_height,
)

mp.mp.dps = 30
REL = 1e-9  # the tolerance against the mpmath reference

HEADS = ("flat", "hemispherical", "ellipsoidal", "torispherical")


def _random_tanks(rng, n_each=4):
    """Random vessels of every shape and head; torispherical radii over the valid range."""
    rows = []
    for shape in ("vertical-cylinder", "horizontal-cylinder"):
        for heads in HEADS:
            for _ in range(n_each):
                D = float(rng.uniform(0.3, 5.0))
                L = float(rng.uniform(0.05, 3.0)) * D
                crown = knuckle = np.nan
                if heads == "torispherical":
                    crown = float(rng.uniform(0.5, 1.6)) * D
                    knuckle = float(rng.uniform(0.03, 0.5)) * D
                rows.append(dict(shape=shape, heads=heads, D=D, L=L, crown=crown, knuckle=knuckle))
    for _ in range(n_each):
        rows.append(dict(shape="sphere", heads="flat", D=float(rng.uniform(0.3, 5.0))))
        rows.append(dict(shape="box", heads="flat", L=float(rng.uniform(0.2, 5)), W=float(rng.uniform(0.2, 5)),
                         H=float(rng.uniform(0.2, 5))))
    return rows


def _arrays(rows):
    g = lambda k: [r.get(k, np.nan) for r in rows]  # noqa: E731
    return VesselArrays.from_columns(g("shape"), g("heads"), g("D"), g("L"), g("W"), g("H"), g("crown"), g("knuckle"))


# ------------------------------------------------------------------ the mpmath reference


class _Head:
    """A head's profile in mpmath: depth a, crown/knuckle split, radius at depth z from the apex."""

    def __init__(self, heads, R, crown=None, knuckle=None):
        self.kind, self.R = heads, mp.mpf(R)
        R = self.R
        if heads == "flat":
            self.a = mp.mpf(0)
        elif heads == "hemispherical":
            self.a = R
        elif heads == "ellipsoidal":
            self.a = R / 2  # 2:1 semi-ellipsoidal: depth D/4 (common practice)
        else:
            Rc, rk = mp.mpf(crown), mp.mpf(knuckle)
            sin_a = (R - rk) / (Rc - rk)
            cos_a = mp.sqrt(1 - sin_a ** 2)
            self.Rc, self.rk = Rc, rk
            self.a1 = Rc * (1 - cos_a)  # crown depth
            self.a = self.a1 + rk * cos_a  # knuckle adds rk cos(alpha) up to its tube centre's plane

    def splits(self):
        return [self.a1] if self.kind == "torispherical" else []

    def rho_and_rrho(self, z):
        """(rho, rho * drho/dz) at depth z (0 <= z <= a) above the apex."""
        R, a = self.R, self.a
        if self.kind == "hemispherical":
            return mp.sqrt(max(2 * R * z - z * z, 0)), R - z
        if self.kind == "ellipsoidal":
            return R / a * mp.sqrt(max(2 * a * z - z * z, 0)), R * R * (a - z) / (a * a)
        if z <= self.a1:
            return mp.sqrt(max(2 * self.Rc * z - z * z, 0)), self.Rc - z
        w = a - z
        root = mp.sqrt(self.rk ** 2 - w * w)
        rho = R - self.rk + root
        return rho, rho * w / root

    # lying on its side: radius r at axial distance x from the tangent plane (x = a - z)
    def x_at_radius(self, r):
        """Axial distance from the tangent plane where the head's radius is r (closed inverse)."""
        R, a = self.R, self.a
        if self.kind == "hemispherical":
            return mp.sqrt(R * R - r * r)
        if self.kind == "ellipsoidal":
            return a * mp.sqrt(1 - r * r / (R * R))
        rho_j = self.rho_and_rrho(self.a1)[0]
        if r <= rho_j:  # on the crown: z from the apex
            return a - (self.Rc - mp.sqrt(self.Rc ** 2 - r * r))
        return mp.sqrt(self.rk ** 2 - (r - (R - self.rk)) ** 2)


def _segment(r, y0):
    """Area of a disc of radius r below the line y = y0 (centre at 0)."""
    if y0 >= r:
        return mp.pi * r * r
    if y0 <= -r:
        return mp.mpf(0)
    return r * r * mp.acos(-y0 / r) + y0 * mp.sqrt(r * r - y0 * y0)


def _quad(f, points):
    pts = sorted(set(points))
    return mp.quad(f, pts) if len(pts) > 1 else mp.mpf(0)


def reference(row, h):
    """(volume, wetted area) of a vessel filled to h, by mpmath quadrature (see the module docstring)."""
    shape = row["shape"]
    h = mp.mpf(h)
    if shape == "box":
        L, W = mp.mpf(row["L"]), mp.mpf(row["W"])
        return L * W * h, L * W + 2 * (L + W) * h
    if shape == "sphere":
        row = dict(shape="vertical-cylinder", heads="hemispherical", D=row["D"], L=0.0)
    R = mp.mpf(row["D"]) / 2
    L = mp.mpf(row["L"])
    head = _Head(row["heads"], R, row.get("crown"), row.get("knuckle"))
    a = head.a
    if shape == "vertical-cylinder":
        top = 2 * a + L

        def rho_rr(z):
            if z <= a:
                return head.rho_and_rrho(z)
            if z <= a + L:
                return R, mp.mpf(0)
            rho, rr = head.rho_and_rrho(top - z)
            return rho, -rr

        cuts = [0, a, a + L, top - a] + [s for s in head.splits()] + [top - s for s in head.splits()]
        pts = [c for c in cuts if c < h] + [h]
        V = _quad(lambda z: mp.pi * rho_rr(z)[0] ** 2, pts)
        A = _quad(lambda z: 2 * mp.pi * mp.sqrt(rho_rr(z)[0] ** 2 + rho_rr(z)[1] ** 2), pts)
        if row["heads"] == "flat":
            A += mp.pi * R * R  # the bottom disc
        return V, A
    # horizontal
    y0 = h - R
    V = L * _segment(R, y0)
    A = L * 2 * R * mp.acos(-y0 / R)
    if row["heads"] == "flat":
        return V, A + 2 * _segment(R, y0)
    if a == 0:
        return V, A

    def r_rr(x):  # radius and r dr/dx at x from the tangent plane
        rho, rr = head.rho_and_rrho(a - x)
        return rho, -rr

    cuts = [0, a]
    if head.kind == "torispherical":
        cuts.append(a - head.a1)
    if abs(y0) < R:
        cuts.append(head.x_at_radius(abs(y0)))

    def beta(r):
        if r <= abs(y0):
            return mp.pi if y0 > 0 else mp.mpf(0)
        return mp.acos(-y0 / r)

    Vh = _quad(lambda x: _segment(r_rr(x)[0], y0), cuts)
    Ah = _quad(lambda x: 2 * beta(r_rr(x)[0]) * mp.sqrt(r_rr(x)[0] ** 2 + r_rr(x)[1] ** 2), cuts)
    return V + 2 * Vh, A + 2 * Ah


# ------------------------------------------------------------------ tests


def test_random_tanks_against_mpmath_quadrature():
    rng = np.random.default_rng(20261203)
    rows = _random_tanks(rng, n_each=3)
    v = _arrays(rows)
    hmax = maximum_height(v)
    fills = rng.uniform(0.0, 1.0, len(rows))
    fills[:3] = (0.002, 0.5, 0.999)  # near empty, half, near full
    h = fills * hmax
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # no library or numpy warning on any row
        V = volume_at_height(v, h)
        A = wetted_area_at_height(v, h)
        Vt, At = total_volume(v), total_area(v)
        back = liquid_height(v, V)
    for i, row in enumerate(rows):
        ref_V, ref_A = reference(row, h[i])
        assert V[i] == pytest.approx(float(ref_V), rel=REL), (row, fills[i])
        assert A[i] == pytest.approx(float(ref_A), rel=REL), (row, fills[i])
        full_V, full_A = reference(row, hmax[i])
        assert Vt[i] == pytest.approx(float(full_V), rel=REL), row
        if row["heads"] != "flat" or row["shape"] in ("horizontal-cylinder", "sphere"):
            assert At[i] == pytest.approx(float(full_A), rel=REL), row  # (a flat or box top is wetted only at full)
        # the inverse: the height of the reference volume
        assert back[i] == pytest.approx(h[i], rel=REL, abs=1e-12 * hmax[i]), (row, fills[i])


@pytest.mark.parametrize("fill", [1e-6, 1e-3, 0.02, 0.25, 0.5, 0.75, 0.98, 0.999, 1 - 1e-6])
def test_horizontal_torispherical_and_ellipsoidal_at_every_level(fill):
    # The quadrature's hard cases: the liquid surface near the bottom, the top, or the crown-knuckle junction.
    rows = [dict(shape="horizontal-cylinder", heads="torispherical", D=2.0, L=3.0, crown=2.0, knuckle=0.12),
            dict(shape="horizontal-cylinder", heads="torispherical", D=2.0, L=0.5, crown=1.0, knuckle=0.999),
            dict(shape="horizontal-cylinder", heads="torispherical", D=2.0, L=0.5, crown=3.2, knuckle=0.02),
            dict(shape="horizontal-cylinder", heads="ellipsoidal", D=2.0, L=1.0)]
    v = _arrays(rows)
    h = fill * maximum_height(v)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        V, A = volume_at_height(v, h), wetted_area_at_height(v, h)
        back = liquid_height(v, V)
    for i, row in enumerate(rows):
        ref_V, ref_A = reference(row, h[i])
        assert V[i] == pytest.approx(float(ref_V), rel=REL), row
        assert A[i] == pytest.approx(float(ref_A), rel=REL), row
        assert back[i] == pytest.approx(h[i], rel=REL), row


def test_level_at_the_crown_knuckle_junction():
    # The liquid surface exactly at the radius where crown and knuckle meet (y0 = -rho_j): mpmath reference.
    row = dict(shape="horizontal-cylinder", heads="torispherical", D=2.0, L=1.0, crown=2.0, knuckle=0.2)
    R, Rc, rk = 1.0, 2.0, 0.2
    rho_j = Rc * (R - rk) / (Rc - rk)
    h = R - rho_j
    v = _arrays([row])
    ref_V, ref_A = reference(row, h)
    assert volume_at_height(v, h)[0] == pytest.approx(float(ref_V), rel=REL)
    assert wetted_area_at_height(v, h)[0] == pytest.approx(float(ref_A), rel=REL)


def _fluids_tank(row):
    D, L, horizontal = row["D"], row["L"], row["shape"] == "horizontal-cylinder"
    heads = row["heads"]
    if heads == "flat":
        return TANK(D=D, L=L, horizontal=horizontal)
    if heads == "hemispherical":
        return TANK(D=D, L=L, horizontal=horizontal, sideA="spherical", sideB="spherical", sideA_a=D / 2,
                    sideB_a=D / 2)
    if heads == "ellipsoidal":
        return TANK(D=D, L=L, horizontal=horizontal, sideA="ellipsoidal", sideB="ellipsoidal", sideA_a=D / 4,
                    sideB_a=D / 4)
    f, k = row["crown"] / D, row["knuckle"] / D
    return TANK(D=D, L=L, horizontal=horizontal, sideA="torispherical", sideB="torispherical", sideA_f=f,
                sideA_k=k, sideB_f=f, sideB_k=k)


def test_random_tanks_against_fluids_where_fluids_is_exact():
    rng = np.random.default_rng(7)
    rows = [r for r in _random_tanks(rng, n_each=4) if r["shape"] in ("vertical-cylinder", "horizontal-cylinder")]
    v = _arrays(rows)
    h = rng.uniform(0.01, 0.99, len(rows)) * maximum_height(v)
    V, A = volume_at_height(v, h), wetted_area_at_height(v, h)
    Vt, At, Hm = total_volume(v), total_area(v), maximum_height(v)
    for i, row in enumerate(rows):
        tank = _fluids_tank(row)
        upright = _fluids_tank(dict(row, shape="vertical-cylinder"))  # fluids' totals of a horizontal
        assert Vt[i] == pytest.approx(upright.V_total, rel=1e-12), row  # torispherical tank are quadratures
        assert At[i] == pytest.approx(upright.A, rel=1e-12), row  # closed forms in fluids
        assert Hm[i] == pytest.approx(tank.h_max, rel=1e-12), row
        if row["shape"] == "vertical-cylinder" or row["heads"] != "torispherical":
            assert V[i] == pytest.approx(tank.V_from_h(h[i]), rel=1e-12), row  # closed forms in fluids
        if row["shape"] == "vertical-cylinder" or row["heads"] == "flat":
            assert A[i] == pytest.approx(tank.SA_from_h(h[i]), rel=1e-12), row


def test_full_empty_and_over_full():
    rng = np.random.default_rng(3)
    rows = _random_tanks(rng, n_each=1)
    v = _arrays(rows)
    Vt, At, Hm = total_volume(v), total_area(v), maximum_height(v)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        h, A = liquid_height(v, Vt, with_area=True)
        assert np.array_equal(h, Hm) and np.array_equal(A, At)  # brim-full: the whole surface, top included
        h, A = liquid_height(v, 2 * Vt, with_area=True)
        assert np.array_equal(h, Hm) and np.array_equal(A, At)
        assert np.array_equal(liquid_height(v, np.zeros(len(rows))), np.zeros(len(rows)))


def test_torispherical_radii_that_make_no_head_are_nan():
    # crown radius below D/2 or knuckle radius above D/2: no tangent knuckle exists (head geometry)
    v = VesselArrays.from_columns("vertical-cylinder", "torispherical", [2.0, 2.0], [3.0, 3.0],
                                  crown_radius=[0.9, 2.0], knuckle_radius=[0.1, 1.2])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert np.isnan(total_volume(v)).all() and np.isnan(total_area(v)).all()
        assert np.isnan(liquid_height(v, [1.0, 1.0])).all()
