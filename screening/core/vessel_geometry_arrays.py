r"""Vessel volumes, liquid heights and wetted areas on arrays: one row per vessel.

Every shape and head type of the case schema: vertical and horizontal cylinders with flat,
hemispherical, 2:1 semi-ellipsoidal and torispherical heads, spheres and boxes.  All lengths
in m, areas in m^2, volumes in m^3; areas are internal areas of a thin wall.  A wetted area
includes the bottom, and the whole surface (the top too) once the vessel is brim-full.

Closed forms wherever they exist: every vertical vessel (zones of spheres, oblate spheroids and
tori), spheres, boxes, and horizontal cylinders with flat or hemispherical heads (and the volume
with 2:1 ellipsoidal heads, a scaled sphere).  The partial-fill wetted area of a horizontal
ellipsoidal head and the volume and wetted area of a horizontal torispherical head have none;
they are integrals along the head's meridian, computed with a fixed-order Gauss-Legendre rule
on arrays after a change of variable that removes the square-root singularity at the liquid
surface (see :func:`volume_at_height`), so no adaptive quadrature and no library warning is
involved.  The inverse, the liquid height of a liquid volume, is a safeguarded Newton iteration
on arrays with the exact derivative (the free-surface area).

The one-case functions of :mod:`screening.core.vessel_geometry` call these with arrays of
one row, so there is one implementation.

References
----------
Standard mensuration (common practice): circular segment, spherical cap and zone, zones of
an oblate spheroid and of a torus (Pappus), shell method for solids of revolution.
Torispherical head proportions (crown radius f D, knuckle radius k D): ASME Boiler and Pressure
Vessel Code, Section VIII, Div. 1 (flanged-and-dished heads; from memory).
Bell, C. and contributors, *fluids*, ``fluids.geometry`` (``TANK``), version 1.x: the
tests' second reference where its formulas are closed forms.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

SHAPES = ("vertical-cylinder", "horizontal-cylinder", "sphere", "box")
HEADS = ("flat", "hemispherical", "ellipsoidal", "torispherical")
VERTICAL, HORIZONTAL, SPHERE, BOX = range(4)
FLAT, HEMISPHERICAL, ELLIPSOIDAL, TORISPHERICAL = range(4)

# Torispherical proportion when a radius is not given: crown radius 1.0 D, knuckle radius 0.06 D
# (a common flanged-and-dished proportion, common practice; also fluids' default).
DEFAULT_CROWN_FRACTION = 1.0
DEFAULT_KNUCKLE_FRACTION = 0.06

#: Gauss-Legendre nodes per integration piece (each head meridian has at most four pieces).
QUADRATURE_ORDER = 16
_GL_X, _GL_W = np.polynomial.legendre.leggauss(QUADRATURE_ORDER)
_GL_X = (_GL_X + 1.0) / 2.0  # on [0, 1]
_GL_W = _GL_W / 2.0
_BLOCK = 4096  # rows per quadrature block (bounds the temporary arrays: block x nodes)
_HALF_PI = math.pi / 2.0


@dataclass(frozen=True)
class VesselArrays:
    """Shapes and dimensions of many vessels (SI, one row per vessel).

    Parameters
    ----------
    shape : ndarray of int
        Index into :data:`SHAPES`.
    heads : ndarray of int
        Index into :data:`HEADS` (cylinders; ignored otherwise).
    diameter, length, width, height : ndarray of float, [m]
        As :class:`screening.core.vessel_geometry.VesselShape`; NaN where a shape has no such dimension.
    crown_radius, knuckle_radius : ndarray of float, [m]
        Torispherical heads, defaults applied (:data:`DEFAULT_CROWN_FRACTION`,
        :data:`DEFAULT_KNUCKLE_FRACTION` of D); NaN for other heads.

    Examples
    --------
    >>> v = VesselArrays.from_columns(["sphere", "box"], diameter=[2.0, np.nan], length=[np.nan, 2.0],
    ...                               width=[np.nan, 1.0], height=[np.nan, 1.5])
    >>> len(v), v.shape.tolist()
    (2, [2, 3])
    """

    shape: np.ndarray
    heads: np.ndarray
    diameter: np.ndarray
    length: np.ndarray
    width: np.ndarray
    height: np.ndarray
    crown_radius: np.ndarray
    knuckle_radius: np.ndarray

    def __len__(self) -> int:
        return len(self.shape)

    @classmethod
    def from_columns(cls, shape, heads="flat", diameter=np.nan, length=np.nan, width=np.nan, height=np.nan,
                     crown_radius=np.nan, knuckle_radius=np.nan) -> "VesselArrays":
        """Build from names (one or one per row) and dimension columns (scalars or arrays, NaN where absent)."""
        n = max(len(np.atleast_1d(np.asarray(x, dtype=object))) for x in
                (shape, heads, diameter, length, width, height, crown_radius, knuckle_radius))
        names = [shape] * n if isinstance(shape, str) else list(shape)
        if isinstance(heads, str):
            heads = [heads] * n
        shape_code = np.array([SHAPES.index(s) for s in names], dtype=np.int64)
        head_code = np.array([HEADS.index(h) for h in heads], dtype=np.int64)
        col = lambda x: np.broadcast_to(np.asarray(x, dtype=float), (n,)).copy()  # noqa: E731
        D = col(diameter)
        crown, knuckle = col(crown_radius), col(knuckle_radius)
        tori = np.isin(shape_code, (VERTICAL, HORIZONTAL)) & (head_code == TORISPHERICAL)
        crown = np.where(tori, np.where(np.isnan(crown), DEFAULT_CROWN_FRACTION * D, crown), np.nan)
        knuckle = np.where(tori, np.where(np.isnan(knuckle), DEFAULT_KNUCKLE_FRACTION * D, knuckle), np.nan)
        return cls(shape_code, head_code, D, col(length), col(width), col(height), crown, knuckle)

    @classmethod
    def of(cls, shapes) -> "VesselArrays":
        """From a sequence of :class:`screening.core.vessel_geometry.VesselShape`."""
        nan = lambda x: np.nan if x is None else x  # noqa: E731
        return cls.from_columns([s.shape for s in shapes], [s.heads for s in shapes],
                                [nan(s.diameter) for s in shapes], [nan(s.length) for s in shapes],
                                [nan(s.width) for s in shapes], [nan(s.height) for s in shapes],
                                [nan(s.crown_radius) for s in shapes], [nan(s.knuckle_radius) for s in shapes])


# ------------------------------------------------------------------ head parameters


class _Heads:
    """Per-row parameters of the cylinders and spheres of a VesselArrays (a sphere is a vertical
    cylinder of no length with hemispherical heads): radius, head depth, crown and knuckle."""

    def __init__(self, v: VesselArrays):
        sphere = v.shape == SPHERE
        self.horizontal = v.shape == HORIZONTAL
        self.cylinder = np.isin(v.shape, (VERTICAL, HORIZONTAL, SPHERE))
        self.kind = np.where(sphere, HEMISPHERICAL, v.heads)
        self.L = np.where(sphere, 0.0, v.length)
        R = self.R = v.diameter / 2.0
        kind = self.kind
        tori = kind == TORISPHERICAL
        Rc = np.where(tori, v.crown_radius, R)
        rk = np.where(tori, v.knuckle_radius, 0.0)
        with np.errstate(invalid="ignore", divide="ignore"):
            valid = ~tori | ((Rc >= R) & (rk > 0) & (rk <= R))
            # the knuckle's tube centre lies (R - rk) off the axis, the crown's centre on it, (Rc - rk) apart
            sin_a = np.where(R - rk > 0, (R - rk) / (Rc - rk), 0.0)
            cos_a = np.where(R - rk > 0, np.sqrt(np.maximum((Rc - R) * (Rc + R - 2 * rk), 0.0)) / (Rc - rk), 1.0)
        sin_a = np.where(tori, sin_a, 1.0)
        cos_a = np.where(tori, cos_a, 0.0)
        self.Rc, self.rk, self.sin_a, self.cos_a = Rc, rk, sin_a, cos_a
        self.alpha = np.arctan2(sin_a, cos_a)  # crown half-angle
        self.a1 = Rc * sin_a * sin_a / (1.0 + cos_a)  # crown depth Rc (1 - cos alpha)
        depth = np.select([kind == FLAT, kind == HEMISPHERICAL, kind == ELLIPSOIDAL],
                          [0.0, R, R / 2.0], self.a1 + rk * cos_a)
        self.a = np.where(valid, depth, np.nan)
        head_V, head_A, _ = _vertical_head(self, self.a)
        self.head_volume = np.where(self.cylinder, head_V, np.nan)
        self.head_area = np.where(self.cylinder, head_A, np.nan)
        self.shape, self.D, self.bL, self.bW, self.bH = v.shape, v.diameter, v.length, v.width, v.height
        box = v.shape == BOX
        self.hmax = np.select([box, self.horizontal], [v.height, v.diameter], self.L + 2 * self.a)
        self.Vt = np.where(box, v.length * v.width * v.height, math.pi * R * R * self.L + 2 * self.head_volume)
        self.At = np.where(box, 2.0 * (v.length * v.width + v.length * v.height + v.width * v.height),
                           2 * math.pi * R * self.L + 2 * self.head_area)

    def take(self, idx) -> "_Heads":
        """The rows ``idx`` (every per-row attribute indexed)."""
        out = object.__new__(_Heads)
        for name, value in self.__dict__.items():
            out.__dict__[name] = value[idx]
        return out


def _heads_of(v: VesselArrays) -> _Heads:
    """The head parameters of ``v``, computed once per VesselArrays (it is immutable)."""
    hd = v.__dict__.get("_heads")
    if hd is None:
        hd = _Heads(v)
        object.__setattr__(v, "_heads", hd)
    return hd


def _x_minus_sin(x):
    """x - sin x without cancellation for small x (Taylor series below 1)."""
    x = np.asarray(x, dtype=float)
    x2 = x * x
    series = x * x2 / 6.0 * (1 - x2 / 20 * (1 - x2 / 42 * (1 - x2 / 72 * (1 - x2 / 110 * (1 - x2 / 156 * (
        1 - x2 / 210 * (1 - x2 / 272)))))))
    return np.where(np.abs(x) < 1.0, series, x - np.sin(x))


def _vertical_head(hd: _Heads, z):
    """(volume, wetted area, free-surface area) of the bottom head of a vertical vessel filled to
    depth z (m) above its lowest point, 0 <= z <= head depth; closed forms for every head."""
    kind, R, a = hd.kind, hd.R, hd.a
    z = np.asarray(z, dtype=float)
    pi = math.pi
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        # hemisphere and torispherical crown: spherical cap of radius Rs
        Rs = np.where(kind == TORISPHERICAL, hd.Rc, R)
        zc = np.where(kind == TORISPHERICAL, np.minimum(z, hd.a1), z)
        cap_V = pi * zc * zc * (3 * Rs - zc) / 3.0
        cap_A = 2 * pi * Rs * zc
        cap_S = pi * zc * (2 * Rs - zc)
        # torispherical knuckle above the crown: torus zone, w below the plane of the tube centre
        rk, c = hd.rk, R - hd.rk
        w = np.clip(a - z, 0.0, rk * hd.cos_a)
        wj = rk * hd.cos_a
        root_w, root_j = np.sqrt(np.maximum(rk * rk - w * w, 0.0)), rk * hd.sin_a

        def G(w_, root):  # integral of (c + sqrt(rk^2 - w^2))^2 dw
            return (c * c + rk * rk) * w_ - w_ ** 3 / 3.0 + c * (w_ * root + rk * rk * np.arctan2(w_, root))

        psi, psi_j = np.arctan2(w, root_w), np.arctan2(wj, root_j)
        in_knuckle = (kind == TORISPHERICAL) & (z > hd.a1)
        tori_V = cap_V + np.where(in_knuckle, pi * (G(wj, root_j) - G(w, root_w)), 0.0)
        tori_A = cap_A + np.where(in_knuckle, 2 * pi * rk * (c * (psi_j - psi) + (wj - w)), 0.0)
        tori_S = np.where(in_knuckle, pi * (c + root_w) ** 2, cap_S)
        # 2:1 semi-ellipsoid (oblate spheroid, semi-axes R and a = R/2): zone from its equator down
        u = a - z
        ell_V = pi * R * R / (a * a) * (a * z * z - z ** 3 / 3.0)
        k = R * np.sqrt(R * R - a * a) / (a * a)

        def F(u_):  # integral of sqrt(R^2 + k^2 u^2) du
            return u_ / 2.0 * np.sqrt(R * R + k * k * u_ * u_) + R * R / (2 * k) * np.arcsinh(k * u_ / R)

        ell_A = 2 * pi * (F(a) - F(u))
        ell_S = pi * R * R / (a * a) * z * (2 * a - z)
    V = np.select([kind == FLAT, kind == HEMISPHERICAL, kind == ELLIPSOIDAL], [0.0, cap_V, ell_V], tori_V)
    A = np.select([kind == FLAT, kind == HEMISPHERICAL, kind == ELLIPSOIDAL], [pi * R * R, cap_A, ell_A], tori_A)
    S = np.select([kind == FLAT, kind == HEMISPHERICAL, kind == ELLIPSOIDAL], [pi * R * R, cap_S, ell_S], tori_S)
    return V, A, S


def _segment_angle(h, D):
    """Half-angle (rad) of the wetted arc of a circle of diameter D filled to h: acos(1 - 2h/D), stably."""
    return 2.0 * np.arcsin(np.sqrt(np.clip(h / D, 0.0, 1.0)))


# ------------------------------------------------------------------ horizontal heads by quadrature


def _head_quadrature(hd_rows, y0, want_area: bool):
    """(volume, wetted area, free-surface area) of ONE head of a horizontal vessel below the plane
    y = y0 <= 0 (m, from the axis); the area is None unless ``want_area``.

    Notes
    -----
    Shell method along the meridian (angle t from the apex; radius rho(t), axial depth X(t) from the
    tangent plane): a circle of radius rho lies below the plane over the angle 2 beta,
    beta = acos(-y0 / rho) where rho > |y0| (0 elsewhere), so

    V = int 2 beta rho X drho,  A = int 2 beta rho ds,  dV/dy0 = int 2 X rho drho / sqrt(rho^2 - y0^2).

    Ellipsoidal: rho = R sin t, X = a cos t.  Torispherical: crown (t <= alpha) rho = Rc sin t,
    X = a - Rc (1 - cos t); knuckle rho = R - rk + rk sin t, X = rk cos t.  The meridian is cut at the
    crown-knuckle junction and where rho = |y0| (t = t*); beyond t*, t = t* + u^2 makes beta (a square
    root of t - t*) smooth in u, so a fixed Gauss-Legendre rule converges fast on every piece.
    """
    kind, R, a, Rc, rk, alpha = hd_rows
    level = np.minimum(-y0, R)
    tori = kind == TORISPHERICAL
    sin_al = np.sin(alpha)
    rho_j = np.where(tori, Rc * sin_al, R)
    with np.errstate(invalid="ignore", divide="ignore"):
        on_first = level <= rho_j  # t* on the crown (or the ellipsoid)
        t_star = np.where(on_first, np.arcsin(np.clip(level / np.where(tori, Rc, R), 0, 1)),
                          np.arcsin(np.clip((level - (R - rk)) / rk, -1, 1)))
    t_star = np.clip(t_star, 0.0, _HALF_PI)
    cut = np.where(tori, alpha, _HALF_PI)
    col = lambda x: x[:, None]  # noqa: E731
    V = np.zeros_like(y0)
    A = np.zeros_like(y0) if want_area else None
    S = np.zeros_like(y0)
    ts, lv, y0c = col(t_star), col(level), col(y0)
    for piece in (0, 1):
        if piece == 0:
            lo, hi = t_star, np.maximum(cut, t_star)
        else:
            if not tori.any():
                break
            lo, hi = np.maximum(cut, t_star), np.where(tori, _HALF_PI, cut)
            hi = np.maximum(hi, lo)
        u0 = np.sqrt(lo - t_star)
        du = np.sqrt(hi - t_star) - u0
        u = col(u0) + col(du) * _GL_X[None, :]
        t = ts + u * u
        s, co = np.sin(t), np.cos(t)
        if piece == 0:  # crown of a torispherical head, or the ellipsoid
            scale = col(np.where(tori, Rc, R))
            rho = scale * s
            X = np.where(col(tori), col(a) - scale * s * s / (1.0 + co), col(a) * co)
            drho = scale * co
            ds = scale if not want_area else np.where(col(tori), scale, np.sqrt((col(R) * co) ** 2 + (col(a) * s) ** 2))
            gap = scale * 2.0 * np.cos((t + ts) / 2.0) * np.sin(u * u / 2.0)  # rho - |y0|, no cancellation
        else:  # knuckle
            rkc = col(rk)
            rho = col(R - rk) + rkc * s
            X = rkc * co
            drho = rkc * co
            ds = rkc
            al = col(alpha)
            rise = rkc * 2.0 * np.cos((t + al) / 2.0) * np.sin((t - al) / 2.0)  # rho(t) - rho(alpha)
            same = 2.0 * np.cos((t + ts) / 2.0) * np.sin(u * u / 2.0) * rkc  # rho(t) - rho(t*), both on it
            gap = np.where(col(on_first), rise + (col(rho_j) - lv), same)
        gap = np.maximum(gap, 0.0)
        root = np.sqrt(gap * (rho + lv))  # sqrt(rho^2 - y0^2)
        beta = np.arctan2(root, -y0c)
        w = col(du) * _GL_W[None, :] * 2.0 * u  # dt = 2 u du
        V += (w * beta * rho * X * drho).sum(axis=1) * 2.0
        if want_area:
            A += (w * beta * rho * ds).sum(axis=1) * 2.0
        with np.errstate(invalid="ignore", divide="ignore"):
            ratio = np.where(root > 0, 2.0 * u / root, 0.0)  # 2u / sqrt(rho^2 - y0^2) is smooth in u
        S += (col(du) * _GL_W[None, :] * ratio * X * rho * drho).sum(axis=1) * 2.0
    return V, A, S


def _horizontal_heads(hd: _Heads, idx, y0, want_area: bool, approximate: bool = False):
    """(volume, wetted area, free-surface area) of BOTH heads of the horizontal rows ``idx`` below y0;
    ``approximate`` takes torispherical heads as a sphere scaled to their volume (a start for Newton)."""
    kind = hd.kind[idx]
    R = hd.R[idx]
    V = np.zeros(len(idx))
    A = np.zeros(len(idx)) if want_area else None
    S = np.zeros(len(idx))
    h = y0 + R
    pi = math.pi
    flat = kind == FLAT
    D = 2 * R
    th = _segment_angle(h, D)
    seg = R * R * _x_minus_sin(2 * th) / 2.0  # circular segment R^2 (2 theta - sin 2 theta) / 2
    if want_area:
        A = np.where(flat, 2 * seg, A)
    # hemispherical pair: a sphere; ellipsoidal pair: a sphere scaled by a / R along the axis
    cap_V = pi * h * h * (3 * R - h) / 3.0
    cap_S = pi * h * (2 * R - h)
    scale = np.where(kind == ELLIPSOIDAL, hd.a[idx] / R, 1.0)
    curved = (kind == HEMISPHERICAL) | (kind == ELLIPSOIDAL)
    if approximate:
        scale = np.where(kind == TORISPHERICAL, hd.head_volume[idx] / (2 * pi * R ** 3 / 3), scale)
        curved = curved | (kind == TORISPHERICAL)
    V = np.where(curved, scale * cap_V, V)
    S = np.where(curved, scale * cap_S, S)
    if want_area:
        A = np.where(kind == HEMISPHERICAL, 2 * pi * R * h, A)
    quad = np.flatnonzero(((kind == TORISPHERICAL) & (not approximate)) | ((kind == ELLIPSOIDAL) & want_area))
    for start in range(0, len(quad), _BLOCK):
        sel = quad[start:start + _BLOCK]
        rows = idx[sel]
        hd_rows = (hd.kind[rows], hd.R[rows], hd.a[rows], hd.Rc[rows], hd.rk[rows], hd.alpha[rows])
        # by symmetry about the axis, integrate only the part below a plane at or under the axis:
        # above the axis, the wetted part is the whole head less the dry part, a mirror image
        yq = y0[sel]
        upper = yq > 0
        qV, qA, qS = _head_quadrature(hd_rows, -np.abs(yq), want_area)
        tori = hd.kind[rows] == TORISPHERICAL
        qV = np.where(upper, hd.head_volume[rows] - qV, qV)
        V[sel] = np.where(tori, 2 * qV, V[sel])
        S[sel] = np.where(tori, 2 * qS, S[sel])
        if want_area:
            A[sel] = 2 * np.where(upper, hd.head_area[rows] - qA, qA)
    return V, A, S


# ------------------------------------------------------------------ public functions


def total_volume(v: VesselArrays) -> np.ndarray:
    r"""Internal volume of each vessel.

    Parameters
    ----------
    v : VesselArrays

    Returns
    -------
    ndarray, [m^3]
        NaN for a torispherical head whose radii do not make one (crown radius below D/2,
        knuckle radius above D/2).

    Notes
    -----
    Box :math:`L W H`; sphere :math:`\pi D^3/6`; cylinder :math:`\pi D^2 L/4` plus two heads:
    hemispherical :math:`\pi D^3/12` each, 2:1 ellipsoidal :math:`\pi D^3/24` each, torispherical
    a spherical cap of the crown (radius :math:`R_c`, depth :math:`a_1 = R_c(1-\cos\alpha)`,
    :math:`\sin\alpha = (R - r_k)/(R_c - r_k)`) plus a torus zone of the knuckle (radius :math:`r_k`).

    References
    ----------
    Standard mensuration (common practice); ASME BPVC Section VIII Div. 1 head proportions (from memory).

    Examples
    --------
    By hand, D = 2 m, straight side 3 m: flat heads 3 pi = 9.424778 m^3; 2:1 ellipsoidal heads add
    2 pi D^3 / 24 (11.519173); a sphere of D = 2 m 4 pi / 3 = 4.188790 m^3; a 2 x 1 x 1.5 m box 3 m^3:

    >>> v = VesselArrays.from_columns(["vertical-cylinder", "horizontal-cylinder", "sphere", "box"],
    ...                               ["flat", "ellipsoidal", "flat", "flat"], diameter=[2, 2, 2, np.nan],
    ...                               length=[3, 3, np.nan, 2], width=[np.nan, np.nan, np.nan, 1],
    ...                               height=[np.nan, np.nan, np.nan, 1.5])
    >>> np.round(total_volume(v), 6).tolist()
    [9.424778, 11.519173, 4.18879, 3.0]
    """
    return _heads_of(v).Vt


def total_area(v: VesselArrays) -> np.ndarray:
    r"""Total internal surface area of each vessel (shell and heads).

    Parameters
    ----------
    v : VesselArrays

    Returns
    -------
    ndarray, [m^2]

    Notes
    -----
    Box :math:`2(LW + LH + WH)`; sphere :math:`\pi D^2`; cylinder :math:`\pi D L` plus two heads:
    flat :math:`\pi D^2/4`, hemispherical :math:`\pi D^2/2`, 2:1 ellipsoidal (half an oblate
    spheroid) :math:`\pi R^2 + \pi R^2/k\,\operatorname{asinh}(k a/R)` with
    :math:`k = R\sqrt{R^2-a^2}/a^2`, torispherical :math:`2\pi R_c a_1 + 2\pi r_k[(R-r_k)(\pi/2-\alpha)
    + r_k\cos\alpha]` (crown cap and knuckle zone, Pappus).

    References
    ----------
    Standard mensuration (common practice).

    Examples
    --------
    By hand, D = 2 m, straight side 3 m: flat heads 6 pi + 2 pi = 25.132741 m^2; hemispherical heads
    6 pi + 4 pi = 31.415927 m^2:

    >>> v = VesselArrays.from_columns("vertical-cylinder", ["flat", "hemispherical"], diameter=2.0, length=3.0)
    >>> np.round(total_area(v), 6).tolist()
    [25.132741, 31.415927]
    """
    return _heads_of(v).At


def maximum_height(v: VesselArrays) -> np.ndarray:
    """Inside height of each vessel from its bottom to its top.

    Parameters
    ----------
    v : VesselArrays

    Returns
    -------
    ndarray, [m]
        Box H; sphere and horizontal cylinder D; vertical cylinder L plus both head depths.

    Examples
    --------
    A vertical cylinder with 2:1 ellipsoidal heads, D = 2 m, L = 3 m, is 3 + 2 x D/4 = 4 m tall (by hand):

    >>> maximum_height(VesselArrays.from_columns("vertical-cylinder", "ellipsoidal", 2.0, 3.0)).tolist()
    [4.0]
    """
    return _heads_of(v).hmax


def _at_height(hd: _Heads, h, want_area: bool, approximate: bool = False):
    """(volume, wetted area or None, free-surface area) of every vessel filled to h (below full)."""
    n = len(hd.R)
    pi = math.pi
    hc = np.clip(h, 0.0, hd.hmax)
    V = np.full(n, np.nan)
    A = np.full(n, np.nan) if want_area else None
    S = np.full(n, np.nan)
    box = np.flatnonzero(hd.shape == BOX)
    if len(box):
        Lb, Wb, hb = hd.bL[box], hd.bW[box], hc[box]
        V[box] = Lb * Wb * hb
        S[box] = Lb * Wb
        if want_area:
            A[box] = Lb * Wb + 2.0 * (Lb + Wb) * hb
    # vertical cylinders and spheres: bottom head, straight side, top head (by symmetry)
    vert = np.flatnonzero(hd.cylinder & ~hd.horizontal)
    if len(vert):
        sub = hd.take(vert)
        hv, top = hc[vert], sub.hmax
        a, L, R = sub.a, sub.L, sub.R
        upper = hv > a + L
        z = np.where(upper, np.clip(top - hv, 0.0, a), np.minimum(hv, a))  # into the top head's dry cap
        Vz, Az, Sz = _vertical_head(sub, z)
        side = np.clip(hv - a, 0.0, L)
        V[vert] = np.where(upper, 2 * sub.head_volume + pi * R * R * L - Vz, Vz + pi * R * R * side)
        S[vert] = np.where(upper | (hv <= a), Sz, pi * R * R)
        if want_area:
            A[vert] = np.where(upper, 2 * sub.head_area + 2 * pi * R * L - Az, Az + 2 * pi * R * side)
    # horizontal cylinders: the straight shell (segments) and the heads
    hor = np.flatnonzero(hd.horizontal)
    if len(hor):
        R, L, hh = hd.R[hor], hd.L[hor], hc[hor]
        th = _segment_angle(hh, 2 * R)
        seg = R * R * _x_minus_sin(2 * th) / 2.0
        hV, hA, hS = _horizontal_heads(hd, hor, hh - R, want_area, approximate)
        V[hor] = L * seg + hV
        S[hor] = 2 * L * np.sqrt(np.maximum(hh * (2 * R - hh), 0.0)) + hS
        if want_area:
            A[hor] = 2 * R * th * L + hA
    return V, A, S


def volume_at_height(v: VesselArrays, h) -> np.ndarray:
    r"""Liquid volume of each vessel filled to a height h above its bottom.

    Parameters
    ----------
    v : VesselArrays
    h : float or ndarray, [m]
        Capped to [0, full height].

    Returns
    -------
    ndarray, [m^3]

    Notes
    -----
    Vertical vessels: closed forms, the bottom head (spherical cap
    :math:`\pi z^2(3R_s - z)/3`, spheroid zone :math:`\pi R^2(a z^2 - z^3/3)/a^2`, torus zone),
    the straight side :math:`\pi R^2 (h - a)`, and the top by symmetry (the full volume less the
    empty cap).  Horizontal cylinders: the straight side :math:`L R^2(2\theta - \sin 2\theta)/2`,
    :math:`\theta = \arccos(1 - 2h/D)`; hemispherical heads together a spherical cap, 2:1
    ellipsoidal heads that cap scaled by :math:`a/R`; torispherical heads by the shell integral
    along the meridian (angle :math:`t` from the apex, radius :math:`\rho(t)`, axial depth
    :math:`X(t)`)

    .. math:: V_{head} = \int 2\beta\,\rho\,X\,\frac{d\rho}{dt}\,dt, \qquad
              \beta = \arccos(-y_0/\rho),\ y_0 = h - R,

    with a fixed Gauss-Legendre rule on each piece (crown, knuckle, each split where
    :math:`\rho = |y_0|`, beyond which :math:`t = t^* + u^2`).

    References
    ----------
    Standard mensuration (common practice).

    Examples
    --------
    A sphere of D = 2 m filled to 1 m holds 2 pi / 3 = 2.094395 m^3 (cap formula, by hand); a
    horizontal torispherical tank half full holds half its volume (symmetry):

    >>> v = VesselArrays.from_columns(["sphere", "horizontal-cylinder"], ["flat", "torispherical"],
    ...                               diameter=2.0, length=[np.nan, 3.0])
    >>> vol = volume_at_height(v, [1.0, 1.0])
    >>> round(float(vol[0]), 6), bool(abs(vol[1] / total_volume(v)[1] - 0.5) < 1e-13)
    (2.094395, True)
    """
    hd = _heads_of(v)
    return _at_height(hd, np.broadcast_to(np.asarray(h, dtype=float), (len(v),)), False)[0]


def wetted_area_at_height(v: VesselArrays, h) -> np.ndarray:
    r"""Wall area in contact with liquid filled to a height h (the bottom included).

    Parameters
    ----------
    v : VesselArrays
    h : float or ndarray, [m]
        At or above the full height the whole internal area (the top is wetted too).

    Returns
    -------
    ndarray, [m^2]

    Notes
    -----
    Vertical vessels: closed forms (spherical zone :math:`2\pi R_s z`, spheroid zone
    :math:`2\pi\int\sqrt{R^2 + k^2u^2}\,du`, torus zone by Pappus, side :math:`\pi D (h - a)`, top by
    symmetry); box :math:`LW + 2(L+W)h`; horizontal cylinders the arc :math:`2R\theta L` plus the
    heads: flat two segments, hemispherical :math:`2\pi R h` (a spherical zone), ellipsoidal and
    torispherical :math:`\int 2\beta\rho\,ds` along the meridian by the fixed Gauss-Legendre rule of
    :func:`volume_at_height`.

    References
    ----------
    Standard mensuration (common practice).

    Examples
    --------
    A half-full horizontal cylinder, D = 2 m, L = 3 m, flat ends: 3 pi + pi = 12.566371 m^2 (by hand);
    a 2:1 ellipsoidal one wets half its total area (symmetry):

    >>> v = VesselArrays.from_columns("horizontal-cylinder", ["flat", "ellipsoidal"], 2.0, 3.0)
    >>> area = wetted_area_at_height(v, 1.0)
    >>> round(float(area[0]), 6), bool(abs(area[1] / total_area(v)[1] - 0.5) < 1e-12)
    (12.566371, True)
    """
    hd = _heads_of(v)
    h = np.broadcast_to(np.asarray(h, dtype=float), (len(v),))
    return _wetted(hd, h)


def _wetted(hd: _Heads, h):
    return np.where(h >= hd.hmax, hd.At, _at_height(hd, h, True)[1])


def liquid_height(v: VesselArrays, liquid_volume, with_area: bool = False):
    r"""Liquid height above the bottom of each vessel holding a liquid volume (the inverse of V(h)).

    Parameters
    ----------
    v : VesselArrays
    liquid_volume : float or ndarray, [m^3]
    with_area : bool
        Also return the wetted area at that height (as :func:`wetted_area_at_height`).

    Returns
    -------
    ndarray, [m] (and ndarray, [m^2] with ``with_area``)
        0 for no liquid; the full height at or above the total volume (within
        :data:`FULL_TOLERANCE` of it, which is rounding).

    Notes
    -----
    Safeguarded Newton iteration on arrays: :math:`h \leftarrow h - (V(h) - V)/S(h)`, with
    :math:`S = dV/dh` the free-surface area, bisection of the bracket whenever the step leaves
    it; it stops when the step is below about 1e-15 of the height. Boxes and flat-bottomed
    vertical cylinders are solved directly.

    References
    ----------
    Standard mensuration (common practice); Newton's method with bisection safeguard (common practice).

    Examples
    --------
    Half full: a sphere of D = 2 m or a horizontal cylinder of D = 2 m stands at 1 m (symmetry);
    pi x 1.5 m^3 in a flat-bottomed vertical cylinder of D = 2 m stands 1.5 m (by hand):

    >>> v = VesselArrays.from_columns(["sphere", "horizontal-cylinder", "vertical-cylinder"],
    ...                               ["flat", "torispherical", "flat"], diameter=2.0, length=[np.nan, 3.0, 3.0])
    >>> volume = total_volume(v) / 2
    >>> volume[2] = math.pi * 1.5
    >>> np.round(liquid_height(v, volume), 12).tolist()
    [1.0, 1.0, 1.5]
    """
    hd = _heads_of(v)
    n = len(v)
    Vq = np.broadcast_to(np.asarray(liquid_volume, dtype=float), (n,)).copy()
    h = _heights(hd, Vq)
    if not with_area:
        return h
    return h, _wetted(hd, h)


#: A liquid volume within this fraction of the vessel's volume is taken as full: the difference is
#: rounding (of a mass over a density, say), and near a curved top the height's error grows as its
#: square root (1e-16 short of full would leave a dry cap 1e-8 of the diameter deep).
FULL_TOLERANCE = 1e-14


def _heights(hd: _Heads, Vq):
    hmax, Vt = hd.hmax, hd.Vt
    full = Vq >= Vt * (1.0 - FULL_TOLERANCE)
    h = np.where(full, hmax, 0.0)
    h = np.where(np.isnan(Vt) | np.isnan(Vq), np.nan, h)
    inside = (Vq > 0) & ~full
    pi = math.pi
    vertical = hd.cylinder & ~hd.horizontal
    with np.errstate(invalid="ignore", divide="ignore"):
        base = np.where(hd.shape == BOX, hd.bL * hd.bW, pi * hd.R ** 2)
        # vertical vessels: the straight side (and a box) is solved directly
        in_side = inside & ((hd.shape == BOX) | (vertical & (Vq >= hd.head_volume)
                                                 & (Vq <= hd.head_volume + base * hd.L)))
        h = np.where(in_side, np.where(hd.shape == BOX, 0.0, hd.a) + (Vq - np.where(hd.shape == BOX, 0.0,
                                                                                  hd.head_volume)) / base, h)
    todo = np.flatnonzero(inside & ~in_side)
    if len(todo):
        h[todo] = _newton_heights(hd.take(todo), Vq[todo])
    return h


# start values: the height fraction of a flat-ended horizontal cylinder and of a spherical cap
# at a volume fraction (tables; Newton's method refines them)
_S = (1.0 - np.cos(np.linspace(0.0, math.pi, 2049))) / 2.0
_CYL_FRACTION = _x_minus_sin(2 * _segment_angle(_S, 1.0)) / (2 * math.pi)  # (phi - sin phi) / 2 pi
_CAP_FRACTION = _S * _S * (3.0 - 2.0 * _S)


def _newton_heights(hd: _Heads, target):
    """Heights of liquid volumes strictly inside the vessels' head regions (or horizontal/spherical)."""
    hmax, Vt = hd.hmax, hd.Vt
    vertical = ~hd.horizontal
    # a first guess: horizontal and spheres from the tables; a vertical head as a spherical cap
    top = vertical & (target > Vt / 2)
    head_fraction = np.where(top, (Vt - target), target) / np.maximum(hd.head_volume, 1e-300)
    z = hd.a * np.interp(np.clip(head_fraction, 0, 1) / 2, _CAP_FRACTION, _S) * 2
    guess_v = np.where(top, hmax - z, z)
    table = np.where(hd.shape == SPHERE, 1, 0)
    frac = target / Vt
    guess_h = hmax * np.where(table == 1, np.interp(frac, _CAP_FRACTION, _S), np.interp(frac, _CYL_FRACTION, _S))
    h = np.where(vertical & (hd.shape != SPHERE), guess_v, guess_h)
    approx = hd.horizontal & (hd.kind == TORISPHERICAL)
    if approx.any():  # first the closed-form stand-in for torispherical heads, then the quadrature
        sel = np.flatnonzero(approx)
        h[sel] = _newton(hd.take(sel), target[sel], h[sel], True)
    return _newton(hd, target, h, False)


def _newton(hd: _Heads, target, h, approximate: bool):
    hmax = hd.hmax
    h = h.copy()
    lo = np.zeros(len(h))
    hi = hmax.copy()
    active = np.arange(len(h))
    part = hd
    for _ in range(100):
        Vh, _, S = _at_height(part, h[active], False, approximate)
        f = Vh - target[active]
        lo[active] = np.where(f < 0, h[active], lo[active])
        hi[active] = np.where(f > 0, h[active], hi[active])
        with np.errstate(divide="ignore", invalid="ignore"):
            step = np.where(S > 0, f / S, np.inf)
        newton = h[active] - step
        bad = ~((newton > lo[active]) & (newton < hi[active]))
        done = (f == 0) | (np.abs(step) <= 1e-14 * hmax[active]) | (hi[active] - lo[active] <= 1e-13 * hmax[active])
        new = np.where(bad, 0.5 * (lo[active] + hi[active]), newton)  # bisect when Newton leaves the bracket
        h[active] = np.where(done, np.where(bad, h[active], newton), new)
        keep = ~done
        if not keep.any():
            break
        active = active[keep]
        part = part.take(keep)
    return h
