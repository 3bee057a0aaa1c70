"""Compiled (numba) evaluation of the near pairs listed by :mod:`parasite.extract.kernels`.

The near pairs of a board (pairs that the far rule of
:func:`parasite.extract.pairs.far_mutual` does not cover) are evaluated here in one
compiled loop over the list, pairs in parallel over the cores (``numba.prange``), by
the same formulas, in the same order of operations and with the same switching rules
as the numpy reference :func:`parasite.extract.pairs._mutual`:

* parallel bars: Hoer & Love's exact sum (J. Res. NBS 69C(2), 1965) split along the
  length with its series anchor (:func:`parasite.extract.bars.parallel_bars_near`), or the moment-corrected
  centre filaments beyond ``FAR_RATIO`` section sizes
  (:func:`parasite.extract.bars.parallel_filaments_corrected`);
* parallel pairs with a round conductor that are neither coaxial nor a bar close to a
  round conductor: the moment-corrected centre filaments (fourth order for two round
  ones);
* pairs at any other angle: Gauss-Legendre filaments over both sections with
  Neumann's closed form (Grover, *Inductance Calculations*, 1946;
  :func:`parasite.extract.inclined.inclined_mutual`, same orders and same one-layer
  rule).

The values agree with numpy's to rounding: numpy evaluates arcsinh, arctan and log with
its vectorised (SIMD) routines, the compiled loop with the C library's, and they differ
in the last bit, which the cancelling exact bar sum magnifies
(tests/extract/test_near_kernels.py bounds it).

Two rare families are left to the numpy path (flag ``False`` in ``done``): coaxial
round conductors (:func:`parasite.extract.round.coaxial_round_mutual`, a via and its
image) and a bar close to a parallel round conductor
(:func:`parasite.extract.round.parallel_bar_round`, a probe lead along a trace).
Lengths in m, inductances in H.
"""

from __future__ import annotations

import numba as nb
import numpy as np

from parasite.extract.bars import FAR_RATIO, SERIES_RATIO
from parasite.extract.filaments import MU0_4PI
from parasite.extract.inclined import (
    ORDER_TABLE,
    SAME_LAYER_RULES,
    _grid,
    _same_layer_grids,
)
from parasite.extract.pairs import PARALLEL_SIN


def _rules() -> tuple[np.ndarray, ...]:
    """The section rules of :func:`parasite.extract.inclined.inclined_mutual` as padded
    tables: for each order of ``ORDER_TABLE`` the square grid (rule k), then for each
    order >= 2 the one-layer rule (rule k + len(orders)); nodes as fractions of
    (width, thickness), weights."""
    orders = sorted({n for _, n in ORDER_TABLE})
    rules = []
    for n in orders:
        nodes, w = _grid(n)
        rules.append((nodes, w, nodes, w))
    for n in orders:
        rules.append(_same_layer_grids(*SAME_LAYER_RULES.get(n, (n, 2))) if n >= 2
                     else rules[orders.index(n)])
    ma = max(r[0].shape[0] for r in rules)
    mb = max(r[2].shape[0] for r in rules)
    na = np.array([r[0].shape[0] for r in rules], dtype=np.int64)
    nb_ = np.array([r[2].shape[0] for r in rules], dtype=np.int64)
    xa = np.zeros((len(rules), ma, 2))
    wa = np.zeros((len(rules), ma))
    xb = np.zeros((len(rules), mb, 2))
    wb = np.zeros((len(rules), mb))
    for k, (nda, wta, ndb, wtb) in enumerate(rules):
        xa[k, :nda.shape[0]] = nda
        wa[k, :nda.shape[0]] = wta
        xb[k, :ndb.shape[0]] = ndb
        wb[k, :ndb.shape[0]] = wtb
    return np.array(orders, dtype=np.int64), na, xa, wa, nb_, xb, wb


_R_ORDERS, _R_NA, _R_XA, _R_WA, _R_NB, _R_XB, _R_WB = _rules()
_N_ORDERS = _R_ORDERS.size
_LIMITS = np.array([lim for lim, _ in ORDER_TABLE], dtype=np.float64)
_LIMIT_ORDERS = np.array([n for _, n in ORDER_TABLE], dtype=np.int64)
_LAST_ORDER = int(ORDER_TABLE[-1][1])
_SIGNS = np.array([1.0, -1.0, -1.0, 1.0])


# ---------------------------------------------------------------- filaments


@nb.njit(cache=True, inline="always", error_model="numpy")
def _g_parallel(x: float, rho: float) -> float:
    """:func:`parasite.extract.filaments.g_parallel` for one x (m)."""
    if rho > 0:
        r = np.hypot(x, rho)
        return x * np.arcsinh(x / rho) - x * x / (r + rho)
    ax = abs(x)
    if ax > 0:
        return ax * np.log(ax)
    return 0.0


@nb.njit(cache=True, inline="always", error_model="numpy")
def _corner(a0: float, a1: float, b0: float, b1: float, k: int) -> float:
    """Corner difference k of :func:`parasite.extract.filaments.corner_differences`."""
    if k == 0:
        return b1 - a0
    if k == 1:
        return b1 - a1
    if k == 2:
        return b0 - a0
    return b0 - a1


@nb.njit(cache=True, error_model="numpy")
def _parallel_filament_integral(a0: float, a1: float, b0: float, b1: float,
                                rho: float) -> float:
    """:func:`parasite.extract.filaments.parallel_filament_integral` (m)."""
    acc = 0.0
    for k in range(4):
        acc += _SIGNS[k] * _g_parallel(_corner(a0, a1, b0, b1, k), rho)
    return acc


@nb.njit(cache=True, inline="always", error_model="numpy")
def _skew_antiderivative(s: float, t: float, c: float, sn: float, d: float) -> float:
    """:func:`parasite.extract.filaments._skew_antiderivative` (m)."""
    r = np.sqrt(max(s * s + t * t - 2.0 * s * t * c + d * d, 0.0))
    term_s = 0.0
    if s != 0.0:
        a_s = np.sqrt(s * s * sn * sn + d * d)
        term_s = s * np.arcsinh((t - c * s) / a_s)
    term_t = 0.0
    if t != 0.0:
        a_t = np.sqrt(t * t * sn * sn + d * d)
        term_t = t * np.arcsinh((s - c * t) / a_t)
    term_d = 0.0
    if d > 0.0:
        term_d = (d / sn) * np.arctan((d * d * c + s * t * sn * sn) / (d * sn * r))
    return term_s + term_t - term_d


@nb.njit(cache=True, error_model="numpy")
def filament_mutual(pax: float, pay: float, paz: float, qax: float, qay: float, qaz: float,
                    pbx: float, pby: float, pbz: float, qbx: float, qby: float,
                    qbz: float) -> float:
    """:func:`parasite.extract.filaments.filament_mutual` of one pair of filaments
    pa->qa, pb->qb (coordinates in m; H), same branches (parallel below sin 1e-9)."""
    dax, day, daz = qax - pax, qay - pay, qaz - paz
    dbx, dby, dbz = qbx - pbx, qby - pby, qbz - pbz
    la = np.sqrt(dax * dax + day * day + daz * daz)
    lb = np.sqrt(dbx * dbx + dby * dby + dbz * dbz)
    uax, uay, uaz = dax / la, day / la, daz / la
    ubx, uby, ubz = dbx / lb, dby / lb, dbz / lb
    c = min(max(uax * ubx + uay * uby + uaz * ubz, -1.0), 1.0)
    cx = uay * ubz - uaz * uby
    cy = uaz * ubx - uax * ubz
    cz = uax * uby - uay * ubx
    sn = np.sqrt(cx * cx + cy * cy + cz * cz)
    wx, wy, wz = pax - pbx, pay - pby, paz - pbz
    wu = wx * uax + wy * uay + wz * uaz
    wv = wx * ubx + wy * uby + wz * ubz
    if sn < 1e-9:
        sgn = 1.0 if c >= 0 else -1.0
        b0 = -wu
        b1 = b0 + sgn * lb
        lo, hi = min(b0, b1), max(b0, b1)
        px, py, pz = wx - wu * uax, wy - wu * uay, wz - wu * uaz
        rho = np.sqrt(px * px + py * py + pz * pz)
        return MU0_4PI * (sgn * _parallel_filament_integral(0.0, la, lo, hi, rho))
    if abs(c) > 0.0:
        one_c2 = sn * sn
        s0 = (-wu + c * wv) / one_c2
        t0 = (wv - c * wu) / one_c2
        d = abs(wx * cx + wy * cy + wz * cz) / sn
        sa0, sa1 = -s0, la - s0
        tb0, tb1 = -t0, lb - t0
        f = (_skew_antiderivative(sa1, tb1, c, sn, d)
             - _skew_antiderivative(sa1, tb0, c, sn, d)
             - _skew_antiderivative(sa0, tb1, c, sn, d)
             + _skew_antiderivative(sa0, tb0, c, sn, d))
        return MU0_4PI * (c * f)
    return 0.0


# ---------------------------------------------------------------- inclined pairs


@nb.njit(cache=True, error_model="numpy")
def _segment_distance(a: int, b: int, start: np.ndarray, end: np.ndarray) -> float:
    """:func:`parasite.extract.inclined.segment_distance` of conductors a and b (m)."""
    d1x, d1y, d1z = end[a, 0] - start[a, 0], end[a, 1] - start[a, 1], end[a, 2] - start[a, 2]
    d2x, d2y, d2z = end[b, 0] - start[b, 0], end[b, 1] - start[b, 1], end[b, 2] - start[b, 2]
    rx, ry, rz = start[a, 0] - start[b, 0], start[a, 1] - start[b, 1], start[a, 2] - start[b, 2]
    aa = d1x * d1x + d1y * d1y + d1z * d1z
    e = d2x * d2x + d2y * d2y + d2z * d2z
    f = d2x * rx + d2y * ry + d2z * rz
    c = d1x * rx + d1y * ry + d1z * rz
    bb = d1x * d2x + d1y * d2y + d1z * d2z
    denom = aa * e - bb * bb
    s = min(max((bb * f - c * e) / denom, 0.0), 1.0) if denom > 1e-12 * aa * e else 0.0
    t = (bb * s + f) / e
    if t < 0:
        s = min(max(-c / aa, 0.0), 1.0)
    elif t > 1:
        s = min(max((bb - c) / aa, 0.0), 1.0)
    t = min(max(t, 0.0), 1.0)
    gx = start[a, 0] + s * d1x - start[b, 0] - t * d2x
    gy = start[a, 1] + s * d1y - start[b, 1] - t * d2y
    gz = start[a, 2] + s * d1z - start[b, 2] - t * d2z
    return np.sqrt(gx * gx + gy * gy + gz * gz)


@nb.njit(cache=True, error_model="numpy")
def _choose_order(distance: float, size: float) -> int:
    """:func:`parasite.extract.inclined.choose_order` for one pair."""
    ratio = distance / size
    order = _LAST_ORDER
    for k in range(_LIMITS.size - 1, -1, -1):
        if ratio >= _LIMITS[k]:
            order = _LIMIT_ORDERS[k]
    return order


@nb.njit(cache=True, error_model="numpy")
def _inclined(a: int, b: int, start: np.ndarray, end: np.ndarray, w_dir: np.ndarray,
              t_dir: np.ndarray, width: np.ndarray, thickness: np.ndarray, rnd: np.ndarray,
              size: np.ndarray) -> float:
    """:func:`parasite.extract.inclined.inclined_mutual` of conductors a and b as
    :func:`parasite.extract.pairs._mutual` calls it (order from the distance, one-layer
    rule for flat bars of one layer) (H)."""
    dist = _segment_distance(a, b, start, end)
    order = _choose_order(dist, max(size[a], size[b]))
    k = 0
    while _R_ORDERS[k] != order:
        k += 1
    flat = (not rnd[a] and not rnd[b] and thickness[a] == thickness[b]
            and start[a, 2] == start[b, 2] and t_dir[a, 2] > 0.999999
            and t_dir[b, 2] > 0.999999)
    if flat and order >= 2:
        k += _N_ORDERS
    na, nb_ = _R_NA[k], _R_NB[k]
    acc = 0.0
    for i in range(na):
        fw, ft = _R_XA[k, i, 0], _R_XA[k, i, 1]
        ox = fw * (width[a] * w_dir[a, 0]) + ft * (thickness[a] * t_dir[a, 0])
        oy = fw * (width[a] * w_dir[a, 1]) + ft * (thickness[a] * t_dir[a, 1])
        oz = fw * (width[a] * w_dir[a, 2]) + ft * (thickness[a] * t_dir[a, 2])
        for j in range(nb_):
            gw, gt = _R_XB[k, j, 0], _R_XB[k, j, 1]
            px = gw * (width[b] * w_dir[b, 0]) + gt * (thickness[b] * t_dir[b, 0])
            py = gw * (width[b] * w_dir[b, 1]) + gt * (thickness[b] * t_dir[b, 1])
            pz = gw * (width[b] * w_dir[b, 2]) + gt * (thickness[b] * t_dir[b, 2])
            m = filament_mutual(start[a, 0] + ox, start[a, 1] + oy, start[a, 2] + oz,
                                end[a, 0] + ox, end[a, 1] + oy, end[a, 2] + oz,
                                start[b, 0] + px, start[b, 1] + py, start[b, 2] + pz,
                                end[b, 0] + px, end[b, 1] + py, end[b, 2] + pz)
            acc += m * (_R_WA[k, i] * _R_WB[k, j])
    return acc


# ---------------------------------------------------------------- parallel pairs


@nb.njit(cache=True, error_model="numpy")
def _filaments_corrected(a0: float, a1: float, b0: float, b1: float, dy: float, dz: float,
                         m2y: float, m2z: float, m4: float, with_m4: bool) -> float:
    """:func:`parasite.extract.bars.parallel_filaments_corrected` (H)."""
    rho = np.hypot(dy, dz)
    y2 = dy * dy
    z2 = dz * dz
    rho2 = rho * rho
    acc = 0.0
    for k in range(4):
        x = _corner(a0, a1, b0, b1, k)
        r = np.hypot(x, rho)
        x2 = x * x
        r_minus = x2 / (r + rho)
        inv_minus = -x2 / ((r + rho) * r * rho)
        corr = (-(m2y * y2 + m2z * z2) / (2 * rho2) * inv_minus
                + (m2y - m2z) * (y2 - z2) / (2 * rho2 * rho2) * r_minus)
        val = _g_parallel(x, rho) + corr
        if with_m4:
            r5 = r * r * r * r * r
            val = val - (m4 / 64) * (rho2 - 2 * x2) / r5
        acc += _SIGNS[k] * val
    return MU0_4PI * acc


@nb.njit(cache=True, error_model="numpy")
def _hoer_love_f(x: float, y: float, z: float) -> float:
    """:func:`parasite.extract.bars.hoer_love_f` (m^5). A term whose prefactor is 0
    (an argument 0, as for bars of one thickness side by side) is 0 without
    evaluating its arcsinh or arctan (the same value: 0 times a finite number)."""
    x, y, z = abs(x), abs(y), abs(z)
    x2, y2, z2 = x * x, y * y, z * z
    r = np.sqrt(x2 + y2 + z2)
    den = np.sqrt(y2 + z2)
    lx = x * np.arcsinh(x / den) if den > 0 and x > 0 else 0.0
    den = np.sqrt(x2 + z2)
    ly = y * np.arcsinh(y / den) if den > 0 and y > 0 else 0.0
    den = np.sqrt(x2 + y2)
    lz = z * np.arcsinh(z / den) if den > 0 and z > 0 else 0.0
    xyz = x * y * z > 0
    at_z = np.arctan(x * y / (z * r)) if xyz else 0.0
    at_y = np.arctan(x * z / (y * r)) if xyz else 0.0
    at_x = np.arctan(y * z / (x * r)) if xyz else 0.0
    val = (y2 * z2 / 4 - y2 * y2 / 24 - z2 * z2 / 24) * lx
    val = val + (x2 * z2 / 4 - x2 * x2 / 24 - z2 * z2 / 24) * ly
    val = val + (x2 * y2 / 4 - x2 * x2 / 24 - y2 * y2 / 24) * lz
    val = val + (x2 * x2 + y2 * y2 + z2 * z2 - 3 * x2 * y2 - 3 * y2 * z2 - 3 * x2 * z2) * r / 60
    val = val - x * y * z * (z2 * at_z + y2 * at_y + x2 * at_x) / 6
    return val


@nb.njit(cache=True, error_model="numpy")
def _rect_log_kernel(y: float, z: float) -> float:
    """:func:`parasite.extract.bars.rect_log_kernel` (m^4)."""
    y, z = abs(y), abs(z)
    y2, z2 = y * y, z * z
    s = y2 + z2
    lg = (6 * y2 * z2 - y2 * y2 - z2 * z2) * np.log(s) / 48 if s > 0 else 0.0
    at = 0.0
    if y > 0 and z > 0:
        at = (y2 * y * z * np.arctan(z / y) + y * z2 * z * np.arctan(y / z)) / 6
    return lg + at - 25 * y2 * z2 / 48


@nb.njit(cache=True, inline="always", error_model="numpy")
def _psi_series(a: float, lnrho: float, r2: float, r4: float, r6: float) -> float:
    """:func:`parasite.extract.bars._psi_series` (m)."""
    if not a > 0:
        return 0.0
    ia = 1.0 / a
    ia2 = ia * ia
    return a * (np.log(2 * a) - 1.0 - lnrho) - ia * (r2 / 4 - ia2 * (r4 / 32 - ia2 * r6 / 96))


@nb.njit(cache=True, inline="always", error_model="numpy")
def _first_equal(v: np.ndarray) -> np.ndarray:
    """For each of the 4 values, the index of the first one with the same magnitude
    (the kernels are even: equal magnitudes give equal values)."""
    out = np.empty(4, dtype=np.int64)
    for k in range(4):
        out[k] = k
        for m in range(k):
            if abs(v[m]) == abs(v[k]):
                out[k] = m
                break
    return out


@nb.njit(cache=True, error_model="numpy")
def _cross_section_sum(x: float, yd: np.ndarray, zd: np.ndarray, fy: np.ndarray,
                       fz: np.ndarray, f: np.ndarray) -> float:
    """:func:`parasite.extract.bars._cross_section_sum` for one x (m^5), in the same
    order; F is evaluated once per distinct (|y|, |z|) (``fy``, ``fz`` from
    :func:`_first_equal`; ``f`` a 4 x 4 scratch array)."""
    acc = 0.0
    for j in range(4):
        for k in range(4):
            if fy[j] == j and fz[k] == k:
                f[j, k] = _hoer_love_f(x, yd[j], zd[k])
            else:
                f[j, k] = f[fy[j], fz[k]]
            acc += _SIGNS[j] * _SIGNS[k] * f[j, k]
    return acc


@nb.njit(cache=True, inline="always", error_model="numpy")
def _offset_moments(d: float, s1: float, s2: float) -> tuple[float, float, float]:
    """E[x^2], E[x^4], E[x^6] of ``x = d + u1 - u2`` with u1, u2 uniform over widths
    ``s1``, ``s2`` (m^2, m^4, m^6): the even moments the series of
    :func:`_bars_near` needs, per transverse axis."""
    a2, b2 = s1 * s1, s2 * s2
    e2a, e2b = a2 / 12, b2 / 12
    e4a, e4b = a2 * a2 / 80, b2 * b2 / 80
    e6a, e6b = a2 * a2 * a2 / 448, b2 * b2 * b2 / 448
    m2, m4 = e2a + e2b, e4a + 6 * e2a * e2b + e4b
    m6 = e6a + 15 * e4a * e2b + 15 * e2a * e4b + e6b
    d2 = d * d
    return (d2 + m2, d2 * d2 + 6 * d2 * m2 + m4,
            d2 * d2 * d2 + 15 * d2 * d2 * m2 + 15 * d2 * m4 + m6)


@nb.njit(cache=True, error_model="numpy")
def _bars_near(a0: float, a1: float, b0: float, b1: float, dy: float, dz: float, w1: float,
               t1: float, w2: float, t2: float) -> float:
    """:func:`parasite.extract.bars.parallel_bars_near` of one pair (H)."""
    area = w1 * t1 * w2 * t2
    y2, y4, y6 = _offset_moments(dy, w1, w2)
    z2, z4, z6 = _offset_moments(dz, t1, t2)
    r2 = y2 + z2
    r4 = y4 + 2 * y2 * z2 + z4
    r6 = y6 + 3 * y4 * z2 + 3 * y2 * z4 + z6
    yd = np.empty(4)
    zd = np.empty(4)
    for k in range(4):
        yd[k] = _corner(-w1 / 2, w1 / 2, dy - w2 / 2, dy + w2 / 2, k)
        zd[k] = _corner(-t1 / 2, t1 / 2, dz - t2 / 2, dz + t2 / 2, k)
    fy = _first_equal(yd)
    fz = _first_equal(zd)
    f = np.empty((4, 4))
    tot = 0.0
    for j in range(4):
        for k in range(4):
            if fy[j] == j and fz[k] == k:
                f[j, k] = _rect_log_kernel(yd[j], zd[k])
            else:
                f[j, k] = f[fy[j], fz[k]]
            tot += _SIGNS[j] * _SIGNS[k] * f[j, k]
    lnrho = tot / area
    rho_max = np.hypot(abs(dy) + (w1 + w2) / 2, abs(dz) + (t1 + t2) / 2)
    xstar = SERIES_RATIO * rho_max
    anchor = 0.0
    have_anchor = False
    acc = 0.0
    for k in range(4):
        x = abs(_corner(a0, a1, b0, b1, k))
        if x < xstar:
            if not have_anchor:
                anchor = (_psi_series(xstar, lnrho, r2, r4, r6)
                          - _cross_section_sum(xstar, yd, zd, fy, fz, f) / area)
                have_anchor = True
            psi = _cross_section_sum(x, yd, zd, fy, fz, f) / area + anchor
        else:
            psi = _psi_series(x, lnrho, r2, r4, r6)
        acc += _SIGNS[k] * psi
    return MU0_4PI * acc


@nb.njit(cache=True, error_model="numpy")
def _parallel(a: int, b: int, sgn: float, start: np.ndarray, end: np.ndarray, u: np.ndarray,
              length: np.ndarray, rnd: np.ndarray, width: np.ndarray, thickness: np.ndarray,
              radius: np.ndarray, inner: np.ndarray, w_dir: np.ndarray, t_dir: np.ndarray,
              size: np.ndarray) -> tuple[float, bool]:
    """:func:`parasite.extract.pairs._parallel` of one pair (H), and False for the
    families left to numpy (coaxial round conductors, a bar close to a round one)."""
    r0x, r0y, r0z = start[b, 0] - start[a, 0], start[b, 1] - start[a, 1], start[b, 2] - start[a, 2]
    r1x, r1y, r1z = end[b, 0] - start[a, 0], end[b, 1] - start[a, 1], end[b, 2] - start[a, 2]
    x0 = r0x * u[a, 0] + r0y * u[a, 1] + r0z * u[a, 2]
    x1 = r1x * u[a, 0] + r1y * u[a, 1] + r1z * u[a, 2]
    lo, hi = min(x0, x1), max(x0, x1)
    la = length[a]
    px, py, pz = r0x - x0 * u[a, 0], r0y - x0 * u[a, 1], r0z - x0 * u[a, 2]
    dy = px * w_dir[a, 0] + py * w_dir[a, 1] + pz * w_dir[a, 2]
    dz = px * t_dir[a, 0] + py * t_dir[a, 1] + pz * t_dir[a, 2]
    rho = np.hypot(dy, dz)
    ra, rb = rnd[a], rnd[b]
    if not ra and not rb:
        w1, t1, w2, t2 = width[a], thickness[a], width[b], thickness[b]
        h = max(max(w1, w2), max(t1, t2))
        if np.hypot(dy, dz) >= FAR_RATIO * h:
            m2y = (w1 ** 2 + w2 ** 2) / 12
            m2z = (t1 ** 2 + t2 ** 2) / 12
            val = _filaments_corrected(0.0, la, lo, hi, dy, dz, m2y, m2z, 0.0, False)
        else:
            val = _bars_near(0.0, la, lo, hi, dy, dz, w1, t1, w2, t2)
        return sgn * val, True
    if ra and rb and rho <= 1e-6 * min(radius[a], radius[b]):
        return 0.0, False
    if ra != rb and rho < FAR_RATIO * max(size[a], size[b]):
        return 0.0, False
    var_a = (radius[a] ** 2 + inner[a] ** 2) / 4 if ra else 0.0
    var_b = (radius[b] ** 2 + inner[b] ** 2) / 4 if rb else 0.0
    m2y = var_a + var_b + (0.0 if ra else width[a] ** 2 / 12) \
        + (0.0 if rb else width[b] ** 2 / 12)
    m2z = var_a + var_b + (0.0 if ra else thickness[a] ** 2 / 12) \
        + (0.0 if rb else thickness[b] ** 2 / 12)
    m4 = 0.0
    if ra and rb:
        ro1, ri1, ro2, ri2 = radius[a], inner[a], radius[b], inner[b]
        e4_1 = (ro1 ** 4 + ro1 * ro1 * ri1 * ri1 + ri1 ** 4) / 3
        e4_2 = (ro2 ** 4 + ro2 * ro2 * ri2 * ri2 + ri2 ** 4) / 3
        m4 = e4_1 + e4_2 + 4 * ((ro1 * ro1 + ri1 * ri1) / 2) * ((ro2 * ro2 + ri2 * ri2) / 2)
    return sgn * _filaments_corrected(0.0, la, lo, hi, dy, dz, m2y, m2z, m4, True), True


# ---------------------------------------------------------------- the batch


@nb.njit(cache=True, parallel=True, error_model="numpy")
def near_batch(pa: np.ndarray, pb: np.ndarray, start: np.ndarray, end: np.ndarray,
               u: np.ndarray, length: np.ndarray, rnd: np.ndarray, width: np.ndarray,
               thickness: np.ndarray, radius: np.ndarray, inner: np.ndarray,
               w_dir: np.ndarray, t_dir: np.ndarray, size: np.ndarray, out: np.ndarray,
               done: np.ndarray) -> None:
    """out[k] = the near mutual inductance (H) of conductors pa[k], pb[k] (pairs that
    :func:`parasite.extract.kernels.classify` lists as near: not perpendicular, not
    far); done[k] False where the pair is of a family left to numpy."""
    for k in nb.prange(pa.size):
        a, b = pa[k], pb[k]
        cos = u[a, 0] * u[b, 0] + u[a, 1] * u[b, 1] + u[a, 2] * u[b, 2]
        cx = u[a, 1] * u[b, 2] - u[a, 2] * u[b, 1]
        cy = u[a, 2] * u[b, 0] - u[a, 0] * u[b, 2]
        cz = u[a, 0] * u[b, 1] - u[a, 1] * u[b, 0]
        sin = np.sqrt(cx * cx + cy * cy + cz * cz)
        if sin < PARALLEL_SIN:
            sgn = 1.0 if cos > 0 else (-1.0 if cos < 0 else 0.0)
            out[k], done[k] = _parallel(a, b, sgn, start, end, u, length, rnd, width,
                                        thickness, radius, inner, w_dir, t_dir, size)
        else:
            out[k] = _inclined(a, b, start, end, w_dir, t_dir, width, thickness, rnd, size)
            done[k] = True
