"""Which phase is grounded, and through how many ohms, from three voltmeter readings to earth.

Method (our own formulation of textbook geometry):

1. Trilateration. The three source phasors E_k are known (V_LN at 0°, -120°, +120° for the
   declared sequence). Each reading |E_k - V_g| puts the earth point V_g on a circle around
   E_k; the pairwise differences of the squared equations are linear in V_g and give a
   closed-form start, refined by weighted Gauss-Newton. This is the neutral displacement,
   whatever caused it.
2. Locus fit. A single fault of resistance Rf on phase k, with each phase tied to earth by
   the same admittance Y0 = G + jωC0 (capacitance C0 and the detectors' own burden G: lamps,
   voltmeters, an insulation monitor), puts the earth point on V_g = E_k/(1 + 3·Y0·Rf).
   Without burden that is V_g = E_k/(1 + j·x), x = 3ωC0·Rf: a semicircle from E_k (x = 0) to
   the neutral (x → ∞) on the lagging side of E_k. With burden, Y0 has the angle
   φ = arctan(ωC0/G) < 90° and the locus is a shallower circular arc through E_k and the
   neutral. Writing V_g = E_k·r·e^(-jθ), θ runs from 0 (bolted) to φ (no fault), with
   r = sin(φ - θ)/sin φ (sine rule in the triangle 0, 1, 1 + 3Y0Rf), and the readings
   normalised to V_LN are functions of θ alone:
       faulted phase   sin θ / sin φ
       lagging phase   √(1 + r² - 2 r cos(120° - θ))
       leading phase   √(1 + r² - 2 r cos(120° + θ))
   and x = 3ωC0·Rf = sin φ·sin θ / sin(φ - θ). With φ = 90° (no burden) this is the
   semicircle: r = cos θ, x = tan θ, faulted sin θ.
   For each phase the fit finds the θ whose worst reading residual, in units of the meter
   tolerance, is smallest (a minimax, or Chebyshev, fit: the tolerance is a bound, not a
   standard deviation). A value ≤ 1 means some single fault on that phase explains every
   reading within tolerance. The set of such θ, mapped to Rf, is the uncertainty interval.
3. Decision. If zero displacement fits, no ground is detected (with a lower bound on any
   ground's resistance). If exactly one phase fits, that is the grounded phase; if two do,
   the readings are ambiguous; if none does, the readings are inconsistent with one
   ground and balanced capacitance and are flagged, never forced.

Because the whole locus is fitted, the high-resistance case is handled: past θ = 60° the
phase lagging the grounded one reads lower than the grounded phase itself (x > √3 without
burden); with a burden heavy enough that φ ≤ 60° that never happens, and the lowest reading
is always the grounded phase. ``lag_crossover_ratio`` gives the x where it starts.

Units: volts, ohms, farads, hertz, amperes. numpy does the arithmetic for many reading sets
at once (``diagnose_ground_batch``); ``diagnose_ground`` is the one-set front.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from enum import StrEnum

import numpy as np
import numpy.typing as npt

from workpack.electrical.threephase import PhaseSequence, line_to_neutral
from workpack.numbers import format_number, format_ohms

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]

_HALF_PI = math.pi / 2.0
_SQRT3 = math.sqrt(3.0)
# Highest voltage to earth a single ground can cause, per unit of V_LN: (1+√7)/2 ≈ 1.823,
# on the leading healthy phase at 3ωC0·Rf ≈ 0.373 (derived from the locus).
_LEADING_MAX = (1.0 + math.sqrt(7.0)) / 2.0
_SLACK = 1e-9  # numerical allowance on "within tolerance"
_GRID_WINDOW = 49  # points in the window around the trilaterated start
_GRID_SWEEP = 49  # points sweeping the whole locus
_GOLDEN_STEPS = 32  # shrinks the bracket by 0.618^32 ≈ 2e-7
_INV_PHI = (math.sqrt(5.0) - 1.0) / 2.0
_BISECTIONS = 26
_WINDOW_TOLERANCES = 10.0  # search window half-width, in tolerances of arc length
_CHUNK = 8192  # reading sets per block, to bound memory

STATUS_NO_GROUND = 0
STATUS_SINGLE = 1
STATUS_AMBIGUOUS = 2
STATUS_INCONSISTENT = 3


class GroundStatus(StrEnum):
    """What the readings say about grounds on the system."""

    NO_GROUND = "no ground detected"
    SINGLE = "single ground"
    AMBIGUOUS = "ambiguous"
    INCONSISTENT = "inconsistent"


_STATUS_BY_CODE = {
    STATUS_NO_GROUND: GroundStatus.NO_GROUND,
    STATUS_SINGLE: GroundStatus.SINGLE,
    STATUS_AMBIGUOUS: GroundStatus.AMBIGUOUS,
    STATUS_INCONSISTENT: GroundStatus.INCONSISTENT,
}


@dataclass(frozen=True)
class MeterTolerance:
    """A voltmeter's accuracy as ±(relative × reading + absolute_v) volts.

    This is the usual form of a meter specification ("±1 % of reading + 1 V"); set either
    part to 0 to use only the other. The absolute part must be positive: no meter resolves
    0 V exactly.
    """

    relative: float = 0.01
    absolute_v: float = 1.0

    def __post_init__(self) -> None:
        """Refuse negative parts and a zero absolute part."""
        if not math.isfinite(self.relative) or self.relative < 0:
            raise ValueError(f"relative tolerance must be zero or positive (got {self.relative!r})")
        if not math.isfinite(self.absolute_v) or self.absolute_v <= 0:
            raise ValueError(
                f"absolute tolerance must be a positive number of volts (got {self.absolute_v!r})"
            )

    def bound_v(self, reading_v: float) -> float:
        """The ± bound (V) on one reading (V)."""
        return self.relative * abs(reading_v) + self.absolute_v


@dataclass(frozen=True)
class BatchDiagnosis:
    """Diagnoses of N reading sets; phase axes follow ``labels``. Ratios are 3ωC0·Rf."""

    labels: tuple[str, str, str]
    earth_point_v: npt.NDArray[np.complex128]  # (N,) trilaterated earth potential vs neutral
    trilateration_misfit: FloatArray  # (N,) worst residual / tolerance at that point
    misfit: FloatArray  # (N, 3) best minimax misfit of each phase's single-fault locus
    ratio: FloatArray  # (N, 3) 3ωC0·Rf at that best fit
    ratio_low: FloatArray  # (N, 3) feasible interval, nan where the locus does not fit
    ratio_high: FloatArray  # (N, 3) inf when the interval reaches the neutral
    zero_shift_misfit: FloatArray  # (N,) misfit of "no displacement at all"
    status: IntArray  # (N,) STATUS_* codes
    grounded: IntArray  # (N,) index into labels, -1 when not a single ground
    best: IntArray  # (N,) phase with the smallest misfit
    locus_angle_rad: FloatArray  # (N,) φ = arg(Y0) used: π/2 without burden


def locus_angle(
    frequency_hz: float, capacitance_f: float, burden_conductance_s: float = 0.0
) -> float:
    """φ = arg(G + jωC0) (rad) of each phase's admittance to earth: π/2 without burden.

    ``capacitance_f`` is C0 (F, one phase to earth), ``burden_conductance_s`` the detectors'
    own conductance from one phase to earth (S). Both zero is refused: no path to earth.
    """
    if not math.isfinite(frequency_hz) or frequency_hz <= 0:
        raise ValueError(f"frequency must be positive hertz (got {frequency_hz!r})")
    if not math.isfinite(capacitance_f) or capacitance_f <= 0:
        raise ValueError(
            f"capacitance to earth must be a positive number of farads (got {capacitance_f!r})"
        )
    if not math.isfinite(burden_conductance_s) or burden_conductance_s < 0:
        raise ValueError(
            f"burden conductance must be zero or positive siemens (got {burden_conductance_s!r})"
        )
    return math.atan2(2.0 * math.pi * frequency_hz * capacitance_f, burden_conductance_s)


def _check_angle(phi: npt.ArrayLike) -> FloatArray:
    """Locus angles as an array; ValueError outside (0, π/2]."""
    arr = np.asarray(phi, dtype=np.float64)
    if not np.all(np.isfinite(arr)) or np.any(arr <= 0.0) or np.any(arr > _HALF_PI + 1e-12):
        raise ValueError("locus angle must be in (0, π/2] radians (capacitance must be present)")
    return np.minimum(arr, _HALF_PI)


def _angle_terms(phi: npt.ArrayLike) -> tuple[FloatArray | float, FloatArray | float]:
    """(cot φ, 1/sin φ), exactly (0, 1) at φ = π/2 so that no burden means the semicircle."""
    if np.ndim(phi) == 0 and float(phi) == _HALF_PI:  # type: ignore[arg-type]
        return 0.0, 1.0
    phi_a = np.asarray(phi, dtype=np.float64)
    sin_phi = np.sin(phi_a)
    return np.where(phi_a == _HALF_PI, 0.0, np.cos(phi_a) / sin_phi), 1.0 / sin_phi


def locus_readings(
    theta: FloatArray, phi: npt.ArrayLike = _HALF_PI
) -> tuple[FloatArray, FloatArray, FloatArray]:
    """Readings / V_LN of the (faulted, lagging, leading) phases at locus angle θ (rad).

    θ runs from 0 (bolted fault) to φ (no fault); ``phi`` is arg(Y0), π/2 without burden
    (then θ = arctan(3ωC0·Rf)). Arrays broadcast.
    """
    cot_phi, inv_sin_phi = _angle_terms(phi)
    c = np.cos(theta)
    s = np.sin(theta)
    r = c - cot_phi * s  # sin(φ - θ)/sin φ
    # 1 + r² - 2 r cos(120° ∓ θ), with cos(120° ∓ θ) = -cosθ/2 ± (√3/2) sinθ
    base = 1.0 + r * (r + c)
    cross = _SQRT3 * r * s
    lag = np.sqrt(np.maximum(base - cross, 0.0))
    lead = np.sqrt(np.maximum(base + cross, 0.0))
    return s * inv_sin_phi, lag, lead


def ratio_to_theta(ratio: npt.ArrayLike, phi: npt.ArrayLike = _HALF_PI) -> FloatArray:
    """Locus angle θ (rad) for x = 3ωC0·Rf: tan θ = x sin φ / (sin φ + x cos φ); inf → φ."""
    x = np.asarray(ratio, dtype=np.float64)
    phi_a = np.asarray(phi, dtype=np.float64)
    with np.errstate(invalid="ignore"):
        theta = np.arctan2(x * np.sin(phi_a), np.sin(phi_a) + x * np.cos(phi_a))
    return np.where(np.isinf(x), np.broadcast_to(phi_a, theta.shape), theta)


def theta_to_ratio(theta: FloatArray, phi: npt.ArrayLike = _HALF_PI) -> FloatArray:
    """x = 3ωC0·Rf = sin φ sin θ / sin(φ - θ) (dimensionless), inf at θ = φ (no fault)."""
    phi_a = np.asarray(phi, dtype=np.float64)
    end = theta >= phi_a - 1e-12
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        ratio = np.sin(phi_a) * np.sin(theta) / np.sin(phi_a - theta)
    return np.where(end, np.inf, ratio)


def leading_phase_max(phi: float = _HALF_PI) -> float:
    """Highest reading / V_LN a single ground can put on a phase for locus angle φ.

    (1+√7)/2 ≈ 1.823 without burden (derived, SOURCES.md); lower with a resistive burden,
    whose arc bulges less. Found on a fine grid then refined by golden section.
    """
    phi_a = float(_check_angle(phi))
    grid = np.linspace(0.0, phi_a, 4001)
    values = locus_readings(grid, phi_a)[2]
    i = int(values.argmax())
    a, b = grid[max(i - 1, 0)], grid[min(i + 1, grid.size - 1)]
    for _ in range(60):
        c = b - _INV_PHI * (b - a)
        d = a + _INV_PHI * (b - a)
        if locus_readings(np.array(c), phi_a)[2] > locus_readings(np.array(d), phi_a)[2]:
            b = d
        else:
            a = c
    return float(max(values.max(), locus_readings(np.array(0.5 * (a + b)), phi_a)[2]))


def lag_crossover_ratio(phi: float = _HALF_PI) -> float:
    """x = 3ωC0·Rf beyond which the phase lagging the grounded one reads lower than the
    grounded phase itself: θ = 60° on the locus (faulted² - lag² = 2r[cos(120° - θ) - cos θ]),
    so x = sin φ sin 60° / sin(φ - 60°), √3 without burden; inf when φ ≤ 60° (never)."""
    phi_a = float(_check_angle(phi))
    if phi_a <= math.pi / 3.0 + 1e-12:
        return math.inf
    return math.sin(phi_a) * math.sin(math.pi / 3.0) / math.sin(phi_a - math.pi / 3.0)


def _minimax(
    theta: FloatArray, rho: FloatArray, inv_tau: FloatArray, phi: FloatArray
) -> FloatArray:
    """Worst |predicted - measured| / tolerance over the three roles.

    theta (n, 3, g); rho, inv_tau (n, 3, 3) = (row, hypothesis, role); phi (n, 1, 1).
    Returns (n, 3, g).
    """
    return _worst(*locus_readings(theta, phi), rho, inv_tau)


def _worst(
    faulted: FloatArray, lag: FloatArray, lead: FloatArray, rho: FloatArray, inv_tau: FloatArray
) -> FloatArray:
    """``_minimax`` from readings already computed (broadcastable to (n, 3, g))."""
    worst = np.abs(faulted - rho[:, :, 0:1]) * inv_tau[:, :, 0:1]
    np.maximum(worst, np.abs(lag - rho[:, :, 1:2]) * inv_tau[:, :, 1:2], out=worst)
    np.maximum(worst, np.abs(lead - rho[:, :, 2:3]) * inv_tau[:, :, 2:3], out=worst)
    return worst


_SWEEP_SHARE = np.linspace(0.0, 1.0, _GRID_SWEEP)  # of the locus angle φ
_SWEEP = _SWEEP_SHARE * _HALF_PI
_SWEEP_FAULTED, _SWEEP_LAG, _SWEEP_LEAD = (r[None, None, :] for r in locus_readings(_SWEEP))


def _trilaterate(rho: FloatArray, tau: FloatArray, units: npt.NDArray[np.complex128]) -> tuple[
    npt.NDArray[np.complex128], FloatArray
]:
    """Earth point (per unit of V_LN) from readings rho (n, 3) with tolerances tau (n, 3)."""
    # Closed form from the differences of |u_k - g|² = rho_k² (|u_k| = 1, Σ u_k = 0).
    g = -(units[None, :] * rho**2).sum(axis=1) / 3.0
    w = 1.0 / tau**2
    for _ in range(8):
        d = units[None, :] - g[:, None]  # (n, 3)
        dist = np.abs(d)
        safe = np.where(dist > 1e-12, dist, 1.0)
        r = dist - rho
        jx = np.where(dist > 1e-12, -d.real / safe, 0.0)
        jy = np.where(dist > 1e-12, -d.imag / safe, 0.0)
        a11 = (w * jx * jx).sum(axis=1)
        a12 = (w * jx * jy).sum(axis=1)
        a22 = (w * jy * jy).sum(axis=1)
        b1 = -(w * jx * r).sum(axis=1)
        b2 = -(w * jy * r).sum(axis=1)
        det = a11 * a22 - a12 * a12
        ok = np.abs(det) > 1e-300
        det_safe = np.where(ok, det, 1.0)
        dx = np.where(ok, (a22 * b1 - a12 * b2) / det_safe, 0.0)
        dy = np.where(ok, (a11 * b2 - a12 * b1) / det_safe, 0.0)
        g = g + (dx + 1j * dy)
    misfit = (np.abs(np.abs(units[None, :] - g[:, None]) - rho) / tau).max(axis=1)
    return g, misfit


def _start(
    grid: FloatArray, f_grid: FloatArray, window_step: FloatArray
) -> tuple[FloatArray, FloatArray, FloatArray]:
    """Best grid point, its value and a refinement step from its neighbours' spacing."""
    idx = f_grid.argmin(axis=-1)
    theta = np.take_along_axis(grid, idx[:, :, None], axis=-1)[:, :, 0]
    value = np.take_along_axis(f_grid, idx[:, :, None], axis=-1)[:, :, 0]
    last = grid.shape[-1] - 1
    left = np.take_along_axis(grid, np.maximum(idx - 1, 0)[:, :, None], axis=-1)[:, :, 0]
    right = np.take_along_axis(grid, np.minimum(idx + 1, last)[:, :, None], axis=-1)[:, :, 0]
    # Duplicate points (θ = 0 in both window and sweep) must not shrink the step to 0.
    return theta, value, np.maximum((right - left) / 2.0, window_step)


def _refine(
    theta: FloatArray, value: FloatArray, step: FloatArray, rho_h: FloatArray,
    inv_tau_h: FloatArray, phi: FloatArray,
) -> tuple[FloatArray, FloatArray]:
    """Golden-section search for the minimum within ±step of θ (any shape (n, k)).

    ``phi`` (n, 1) bounds θ to the locus. Never returns worse than the starting point (the
    bracket need not be unimodal).
    """
    phi3 = phi[:, :, None]
    a = np.clip(theta - step, 0.0, phi)
    b = np.clip(theta + step, 0.0, phi)
    c = b - _INV_PHI * (b - a)
    d = a + _INV_PHI * (b - a)
    fc = _minimax(c[:, :, None], rho_h, inv_tau_h, phi3)[:, :, 0]
    fd = _minimax(d[:, :, None], rho_h, inv_tau_h, phi3)[:, :, 0]
    for _ in range(_GOLDEN_STEPS):
        left = fc < fd  # the minimum lies in [a, d]
        b = np.where(left, d, b)
        a = np.where(left, a, c)
        x = np.where(left, b - _INV_PHI * (b - a), a + _INV_PHI * (b - a))
        fx = _minimax(x[:, :, None], rho_h, inv_tau_h, phi3)[:, :, 0]
        c, d = np.where(left, x, d), np.where(left, c, x)
        fc, fd = np.where(left, fx, fd), np.where(left, fc, fx)
    cand = np.where(fc < fd, c, d)
    cand_f = np.minimum(fc, fd)
    better = cand_f < value
    return np.where(better, cand, theta), np.where(better, cand_f, value)


def _fit_block(
    rho: FloatArray, tau: FloatArray, units: npt.NDArray[np.complex128], perm: IntArray,
    phi: FloatArray,
) -> dict[str, npt.NDArray[np.generic]]:
    """Fit one block of reading sets; rho, tau are (n, 3) per unit of V_LN, phi (n,)."""
    n = rho.shape[0]
    g, tri_misfit = _trilaterate(rho, tau, units)
    phi2 = phi[:, None]  # (n, 1)
    phi3 = phi[:, None, None]  # (n, 1, 1)

    # Readings rearranged per hypothesis as (faulted, lagging, leading): (n, 3, 3).
    rho_h = rho[:, perm]
    inv_tau_h = 1.0 / tau[:, perm]  # multiply, not divide, in the hot loops
    tau_max = tau.max(axis=1)  # (n,)

    # Start each phase's search at the locus point nearest the trilaterated earth point.
    # The locus of phase k is an arc of the circle through E_k and the neutral with centre
    # E_k·(1 + j·cot φ)/2 and radius 1/(2 sin φ); on it the angle about the centre,
    # turned by π/2 - φ, is β = -2θ.
    uk = units[None, :]  # (1, 3)
    cot = np.cos(phi2) / np.sin(phi2)
    rel = g[:, None] * np.conj(uk) - 0.5 * (1.0 + 1j * cot)
    beta = np.angle(rel * np.exp(1j * (_HALF_PI - phi2)))
    beta = np.where(beta < -2.0 * phi2, beta + 2.0 * math.pi, beta)
    theta0 = np.where(beta <= 0.0, -beta / 2.0, np.where(beta < math.pi - phi2, 0.0, phi2))
    radius = np.sin(phi2 - theta0) / np.sin(phi2)
    nearest = uk * radius * np.exp(-1j * theta0)
    dist = np.abs(g[:, None] - nearest)
    # Arc length per unit of θ is 1/sin φ.
    half = (dist + _WINDOW_TOLERANCES * tau_max[:, None]) * np.sin(phi2)
    lo = np.maximum(theta0 - half, 0.0)
    hi = np.minimum(theta0 + half, phi2)

    # A fine window around that start, plus a sparse sweep of the whole locus so that the
    # best fit of readings far from any locus is not missed. Sorted, so that neighbours on
    # the grid are neighbours on the locus.
    steps = np.linspace(0.0, 1.0, _GRID_WINDOW)
    window = lo[:, :, None] + (hi - lo)[:, :, None] * steps
    if np.all(phi == _HALF_PI):
        # Without burden the sweep is the same for every row: its readings are precomputed.
        sweep = np.broadcast_to(_SWEEP, (n, 3, _GRID_SWEEP))
        f_sweep = _worst(_SWEEP_FAULTED, _SWEEP_LAG, _SWEEP_LEAD, rho_h, inv_tau_h)
    else:
        sweep = np.broadcast_to(phi3 * _SWEEP_SHARE, (n, 3, _GRID_SWEEP))
        f_sweep = _minimax(phi3 * _SWEEP_SHARE, rho_h, inv_tau_h, phi3)
    f_window = _minimax(window, rho_h, inv_tau_h, phi3)
    unsorted = np.concatenate([window, sweep], axis=-1)
    order = np.argsort(unsorted, axis=-1)
    grid = np.take_along_axis(unsorted, order, axis=-1)  # (n, 3, G)
    f_grid = np.take_along_axis(np.concatenate([f_window, f_sweep], axis=-1), order, axis=-1)
    # Refine the best grid point, and the best one outside its neighbourhood (a second
    # basin: the minimax of readings far from any locus can have two close minima).
    window_step = (hi - lo) / (_GRID_WINDOW - 1)
    best_theta, best_f, spacing = _start(grid, f_grid, window_step)
    elsewhere = np.abs(grid - best_theta[:, :, None]) <= 1.5 * spacing[:, :, None]
    other_theta, other_f, other_spacing = _start(
        grid, np.where(elsewhere, np.inf, f_grid), window_step
    )
    both_theta, both_f = _refine(
        np.concatenate([best_theta, other_theta], axis=1),
        np.concatenate([best_f, other_f], axis=1),
        np.concatenate([spacing, other_spacing], axis=1),
        np.concatenate([rho_h, rho_h], axis=1),
        np.concatenate([inv_tau_h, inv_tau_h], axis=1),
        phi2,
    )
    best_theta, other_theta = both_theta[:, :3], both_theta[:, 3:]
    best_f, other_f = both_f[:, :3], both_f[:, 3:]
    better = other_f < best_f
    best_theta = np.where(better, other_theta, best_theta)
    best_f = np.where(better, other_f, best_f)

    # Feasible interval: hull of the feasible coarse points and the best point, each end
    # refined by bisection against its infeasible neighbour on the coarse grid.
    feasible_grid = f_grid <= 1.0 + _SLACK
    best_ok = best_f <= 1.0 + _SLACK
    big = np.inf
    grid_lo = np.where(feasible_grid, grid, big).min(axis=-1)
    grid_hi = np.where(feasible_grid, grid, -big).max(axis=-1)
    seed_lo = np.where(best_ok, np.minimum(grid_lo, best_theta), grid_lo)
    seed_hi = np.where(best_ok, np.maximum(grid_hi, best_theta), grid_hi)
    any_ok = np.isfinite(seed_lo)
    seed_lo = np.where(any_ok, seed_lo, best_theta)
    seed_hi = np.where(any_ok, seed_hi, best_theta)
    # Infeasible neighbours: nearest coarse point strictly outside the seed.
    below = np.where(grid < seed_lo[:, :, None] - 1e-15, grid, -big).max(axis=-1)
    above = np.where(grid > seed_hi[:, :, None] + 1e-15, grid, big).min(axis=-1)
    # The sweep holds both locus ends, so "nothing outside" means the seed is an end.
    low_end = np.where(np.isfinite(below), below, seed_lo)
    high_end = np.where(np.isfinite(above), above, seed_hi)
    both = _bisect(
        np.concatenate([low_end, high_end], axis=1),
        np.concatenate([seed_lo, seed_hi], axis=1),
        np.concatenate([rho_h, rho_h], axis=1),
        np.concatenate([inv_tau_h, inv_tau_h], axis=1),
        phi3,
    )
    theta_lo, theta_hi = both[:, :3], both[:, 3:]
    theta_lo = np.where(any_ok, theta_lo, np.nan)
    theta_hi = np.where(any_ok, theta_hi, np.nan)

    zero = (np.abs(1.0 - rho) / tau).max(axis=1)
    return {
        "g": g,
        "tri": tri_misfit,
        "misfit": best_f,
        "theta": best_theta,
        "theta_lo": theta_lo,
        "theta_hi": theta_hi,
        "zero": zero,
    }


def _bisect(
    outside: FloatArray, inside: FloatArray, rho_h: FloatArray, inv_tau_h: FloatArray,
    phi3: FloatArray,
) -> FloatArray:
    """Boundary of the feasible set between an infeasible and a feasible θ, shape (n, k).

    Where ``outside`` is itself feasible (a locus end), that end is returned.
    """
    f_out = _minimax(outside[:, :, None], rho_h, inv_tau_h, phi3)[:, :, 0]
    end_feasible = f_out <= 1.0 + _SLACK
    a = outside.copy()
    b = inside.copy()
    for _ in range(_BISECTIONS):
        mid = 0.5 * (a + b)
        ok = _minimax(mid[:, :, None], rho_h, inv_tau_h, phi3)[:, :, 0] <= 1.0 + _SLACK
        b = np.where(ok, mid, b)
        a = np.where(ok, a, mid)
    return np.where(end_feasible, outside, b)


def diagnose_ground_batch(
    readings_v: npt.ArrayLike,
    line_voltage_v: float | npt.ArrayLike,
    sequence: PhaseSequence | str = "ABC",
    tolerance: MeterTolerance = MeterTolerance(),  # noqa: B008 - frozen, so a safe default
    locus_angle_rad: float | npt.ArrayLike = _HALF_PI,
) -> BatchDiagnosis:
    """Diagnose N sets of phase-to-earth readings (V), array (N, 3) in ``sequence.labels`` order.

    ``line_voltage_v`` (V) is one number or one per set: the measured line voltage is best,
    the nominal will do when the bus sits on it. ``locus_angle_rad`` is φ = arg(G + jωC0)
    of each phase's admittance to earth (``locus_angle``), one or one per set: π/2 when no
    detector burden loads the system. Results are dimensionless (3ωC0·Rf), so without
    burden this needs neither frequency nor capacitance; ``diagnose_ground`` converts to
    ohms.
    """
    seq = PhaseSequence.parse(sequence)
    m = np.asarray(readings_v, dtype=np.float64)
    if m.ndim != 2 or m.shape[1] != 3:
        raise ValueError(f"readings must be an array of shape (N, 3) (got {m.shape})")
    if not np.all(np.isfinite(m)) or np.any(m < 0):
        raise ValueError("readings must be zero or positive volts, with no missing values")
    v_ll = np.broadcast_to(np.asarray(line_voltage_v, dtype=np.float64), (m.shape[0],))
    if not np.all(np.isfinite(v_ll)) or np.any(v_ll <= 0):
        raise ValueError("line voltage must be a positive number of volts")
    phi = np.broadcast_to(_check_angle(locus_angle_rad), (m.shape[0],))
    v_ln = v_ll / math.sqrt(3.0)
    tol = tolerance.relative * m + tolerance.absolute_v
    rho = m / v_ln[:, None]
    tau = tol / v_ln[:, None]

    labels = seq.labels
    units = np.array([np.exp(1j * seq.angle_rad(lbl)) for lbl in labels], dtype=np.complex128)
    perm = np.array(
        [
            [labels.index(lbl), labels.index(seq.lagging(lbl)), labels.index(seq.leading(lbl))]
            for lbl in labels
        ],
        dtype=np.int64,
    )

    parts = [
        _fit_block(rho[i : i + _CHUNK], tau[i : i + _CHUNK], units, perm, phi[i : i + _CHUNK])
        for i in range(0, m.shape[0], _CHUNK)
    ]

    def cat(key: str) -> npt.NDArray[np.generic]:
        """Join one result field across blocks."""
        if not parts:
            return np.zeros((0, 3)) if key.startswith(("misfit", "theta")) else np.zeros(0)
        return np.concatenate([p[key] for p in parts], axis=0)

    misfit = cat("misfit").astype(np.float64)
    theta = cat("theta").astype(np.float64)
    zero = cat("zero").astype(np.float64)
    fits = misfit <= 1.0 + _SLACK
    count = fits.sum(axis=1)
    zero_fits = zero <= 1.0 + _SLACK
    status = np.where(
        zero_fits,
        STATUS_NO_GROUND,
        np.where(
            count == 1,
            STATUS_SINGLE,
            np.where(count > 1, STATUS_AMBIGUOUS, STATUS_INCONSISTENT),
        ),
    ).astype(np.int64)
    best = misfit.argmin(axis=1).astype(np.int64) if misfit.size else np.zeros(0, np.int64)
    grounded = np.where(status == STATUS_SINGLE, fits.argmax(axis=1), -1).astype(np.int64)
    g = cat("g").astype(np.complex128) * v_ln
    phi2 = phi[:, None]
    return BatchDiagnosis(
        labels=labels,
        earth_point_v=g,
        trilateration_misfit=cat("tri").astype(np.float64),
        misfit=misfit,
        ratio=theta_to_ratio(theta, phi2),
        ratio_low=theta_to_ratio(cat("theta_lo").astype(np.float64), phi2),
        ratio_high=theta_to_ratio(cat("theta_hi").astype(np.float64), phi2),
        zero_shift_misfit=zero,
        status=status,
        grounded=grounded,
        best=best,
        locus_angle_rad=np.array(phi, dtype=np.float64),
    )


@dataclass(frozen=True)
class GroundDiagnosis:
    """What three phase-to-earth readings say about a ground, with honest uncertainty.

    ``misfit`` is the consistency measure: the worst reading residual, in units of its meter
    tolerance, of the best single-fault explanation (≤ 1: explained within tolerance).
    ``fault_ratio``, ``fault_resistance_ohm`` and ``fitted_readings_v`` describe that best
    fit on ``best_fit_phase``; when ``consistent`` is False they are shown for the record
    and must not be acted on (``grounded_phase`` is then None).
    """

    status: GroundStatus
    consistent: bool  # a single ground (or none) explains every reading within tolerance
    grounded_phase: str | None  # only when exactly one phase's locus fits
    candidate_phases: tuple[str, ...]  # every phase whose locus fits
    best_fit_phase: str  # smallest misfit, even when it does not fit
    lowest_reading_phase: str
    fault_ratio: float | None  # 3ωC0·Rf of the best fit (dimensionless)
    fault_ratio_interval: tuple[float, float] | None
    fault_resistance_ohm: float | None  # None when no capacitance was given
    fault_resistance_interval_ohm: tuple[float, float] | None
    fault_current_a: float | None  # |I_f| = 3ωC0·|V_g| at the best fit; None when unknown
    neutral_shift_v: float  # |V_N| from trilateration, whatever its cause
    earth_point_v: complex  # earth potential relative to the source neutral (V)
    misfit: float
    misfit_by_phase: dict[str, float]
    trilateration_misfit: float
    readings_v: dict[str, float]
    tolerance_v: dict[str, float]
    fitted_readings_v: dict[str, float]  # readings the best fit predicts
    line_voltage_v: float
    sequence: PhaseSequence
    notes: tuple[str, ...]
    next_steps: tuple[str, ...]
    locus_angle_rad: float = _HALF_PI  # arg(G + jωC0): π/2 when no detector burden
    burden_ohm: float | None = None  # detectors' resistance per phase to earth, if given


def _predicted(
    seq: PhaseSequence, v_ln: float, phase: str, ratio: float, phi: float = _HALF_PI
) -> dict[str, float]:
    """Readings (V) a single ground of ratio x on ``phase`` gives, by label."""
    theta = ratio_to_theta(ratio, phi)
    faulted, lag, lead = locus_readings(theta, phi)
    return {
        phase: float(faulted) * v_ln,
        seq.lagging(phase): float(lag) * v_ln,
        seq.leading(phase): float(lead) * v_ln,
    }


def earth_point_fraction(ratio: float, phi: float = _HALF_PI) -> float:
    """|V_g| / V_LN on the locus at x = 3ωC0·Rf: r = sin(φ - θ)/sin φ (1 at a bolted fault)."""
    theta = float(ratio_to_theta(ratio, phi))
    return math.sin(phi - theta) / math.sin(phi)




def diagnose_ground(
    readings_v: Mapping[str, float],
    line_voltage_v: float,
    sequence: PhaseSequence | str = "ABC",
    *,
    frequency_hz: float | None = None,
    capacitance_f: float | None = None,
    tolerance: MeterTolerance = MeterTolerance(),  # noqa: B008 - frozen, so a safe default
    burden_ohm: float | None = None,
) -> GroundDiagnosis:
    """Grounded phase, fault resistance (Ω) and neutral shift (V) from three readings (V).

    ``readings_v`` maps each phase label to its voltmeter reading to earth; ``capacitance_f``
    is C0, one phase's capacitance to earth (F), assumed equal on the three phases.
    ``burden_ohm`` is the resistance from each phase to earth of the detectors connected
    while the readings were taken (lamps, voltmeters, an insulation monitor's share), equal
    on the three phases; it needs the capacitance, since the locus depends on their ratio.
    Without frequency and capacitance the phase and the displacement are still found, but
    not the resistance or current. Locus: V_g = E_k/(1 + 3·Y0·Rf), Y0 = 1/R_burden + jωC0;
    without burden V_g = E_k/(1 + j3ωC0·Rf) (Mitolo, ch. 9, eqs. 9.14-9.15).
    """
    seq = PhaseSequence.parse(sequence)
    seq.check_labels(list(readings_v), "readings")
    if (frequency_hz is None) != (capacitance_f is None):
        raise ValueError("give both frequency and capacitance, or neither")
    if burden_ohm is not None:
        if math.isnan(burden_ohm) or burden_ohm <= 0:
            raise ValueError(f"burden must be a positive number of ohms (got {burden_ohm!r})")
        if capacitance_f is None:
            raise ValueError("a detector burden needs the frequency and capacitance: the "
                             "locus depends on the ratio of the two")
    omega_c: float | None = None
    phi = _HALF_PI
    if frequency_hz is not None and capacitance_f is not None:
        conductance = 0.0 if burden_ohm is None else 1.0 / burden_ohm
        phi = locus_angle(frequency_hz, capacitance_f, conductance)
        omega_c = 3.0 * 2.0 * math.pi * frequency_hz * capacitance_f
    labels = seq.labels
    values = [float(readings_v[lbl]) for lbl in labels]
    batch = diagnose_ground_batch([values], line_voltage_v, seq, tolerance, phi)
    v_ln = line_to_neutral(line_voltage_v)

    status = _STATUS_BY_CODE[int(batch.status[0])]
    misfit_by_phase = {lbl: float(batch.misfit[0, i]) for i, lbl in enumerate(labels)}
    candidates = tuple(lbl for lbl in labels if misfit_by_phase[lbl] <= 1.0 + _SLACK)
    best_i = int(batch.best[0])
    best_phase = labels[best_i]
    readings = dict(zip(labels, values, strict=True))
    tolerance_v = {lbl: tolerance.bound_v(readings[lbl]) for lbl in labels}
    lowest = min(labels, key=lambda lbl: readings[lbl])
    g = complex(batch.earth_point_v[0])
    notes: list[str] = []
    steps: list[str] = []

    def to_ohm(ratio: float) -> float | None:
        """3ωC0·Rf to ohms, or None without capacitance."""
        return None if omega_c is None else ratio / omega_c

    grounded: str | None = None
    ratio: float | None = None
    interval: tuple[float, float] | None = None
    current: float | None = None
    misfit = misfit_by_phase[best_phase]
    fitted = _predicted(seq, v_ln, best_phase, float(batch.ratio[0, best_i]), phi)

    if status is GroundStatus.NO_GROUND:
        misfit = float(batch.zero_shift_misfit[0])
        fitted = dict.fromkeys(labels, v_ln)
        lows = [float(batch.ratio_low[0, i]) for i, lbl in enumerate(labels) if lbl in candidates]
        if lows:
            interval = (min(lows), math.inf)
        notes.append(
            "No ground detected: the readings equal V_LN = "
            f"{v_ln:.1f} V within the meter tolerance."
        )
        if interval is not None and omega_c is not None:
            notes.append(
                f"Any single ground present is above about {format_ohms(interval[0] / omega_c)}: "
                "below the resolution of these meters; an insulation monitor sees further."
            )
    else:
        ratio = float(batch.ratio[0, best_i])
        if best_phase in candidates:
            interval = (float(batch.ratio_low[0, best_i]), float(batch.ratio_high[0, best_i]))
        if omega_c is not None and candidates:
            # KCL at earth: the fault returns the current of the three balanced branches,
            # 3·|Y0|·|V_g|, with |Y0| = ωC0/sin φ.
            current = omega_c / math.sin(phi) * v_ln * earth_point_fraction(ratio, phi)
        if status is GroundStatus.SINGLE:
            grounded = best_phase
            text = f"Single ground on {grounded}"
            if omega_c is not None:
                text += f" through about {format_ohms(ratio / omega_c)}"
            notes.append(text + f"; neutral shifted {abs(g):.0f} V.")
            if lowest != grounded:
                crossover = lag_crossover_ratio(phi)
                where = (f"above about {format_ohms(crossover / omega_c)}"
                         if omega_c is not None
                         else f"with 3ωC0·Rf above {format_number(crossover)}")
                notes.append(
                    f"The lowest reading ({lowest}) is NOT the grounded phase: {where} "
                    "the phase lagging the grounded one reads lowest."
                )
            if omega_c is None:
                steps.append(
                    "Give the system capacitance to earth (C0) to turn the fit into ohms "
                    "and amperes."
                )
        elif status is GroundStatus.AMBIGUOUS:
            notes.append(
                "The readings fit a single ground on any of "
                + ", ".join(candidates)
                + " within the meter tolerance: the displacement is too small to tell."
            )
            steps.append(
                "Repeat the readings with a more accurate meter, or use the insulation "
                "monitor and feeder-by-feeder isolation to find the circuit."
            )
        else:
            notes.append(
                f"No single ground explains these readings (best: {best_phase}, worst "
                f"residual {misfit:.2g} × tolerance). Possible causes: unequal capacitance "
                "to earth, two grounds, a wrong phase sequence, a faulty meter, or a line "
                "voltage other than the value given."
            )
            ceiling_pu = _LEADING_MAX if phi == _HALF_PI else leading_phase_max(phi)
            ceiling = ceiling_pu * v_ln
            over = [lbl for lbl in labels if readings[lbl] - tolerance_v[lbl] > ceiling]
            if over:
                notes.append(
                    f"{', '.join(over)} reads above {ceiling:.0f} V, the most any single "
                    f"ground can put on a phase ({ceiling_pu:.3f} × V_LN, derived from the "
                    "locus): check the line voltage given and the meter."
                )
            other = diagnose_ground_batch([values], line_voltage_v, seq.reversed(), tolerance,
                                          phi)
            alt = "-".join(seq.reversed().order)
            other_best = int(other.best[0])
            other_misfit = float(other.misfit[0, other_best])
            if int(other.status[0]) in (STATUS_SINGLE, STATUS_NO_GROUND):
                notes.append(
                    f"The readings do fit sequence {alt}"
                    + (
                        f" with a ground on {other.labels[int(other.grounded[0])]}"
                        if int(other.status[0]) == STATUS_SINGLE
                        else ""
                    )
                    + ": check the declared phase sequence with a rotation meter."
                )
            elif other_misfit < 0.5 * misfit:
                notes.append(
                    f"The readings come closer to sequence {alt} with a ground on "
                    f"{other.labels[other_best]} (worst residual {other_misfit:.2g} × "
                    "tolerance): check the declared phase sequence with a rotation meter."
                )
            steps.extend(
                (
                    "Measure the line voltages and check the meter on a known source.",
                    "Confirm the phase sequence at this switchboard with a rotation meter.",
                    "Check for a second ground, e.g. with the insulation monitor or by "
                    "isolating feeders one at a time.",
                )
            )
    if status is not GroundStatus.NO_GROUND and status is not GroundStatus.INCONSISTENT:
        steps.append("Find the circuit: open feeders one at a time while watching the readings.")

    if burden_ohm is not None:
        notes.append(
            f"Detector burden {format_ohms(burden_ohm)} per phase to earth taken into the model "
            f"with C0: the fault locus is an arc at {math.degrees(phi):.0f}° instead of 90°."
        )
    resistance = None if ratio is None else to_ohm(ratio)
    r_interval: tuple[float, float] | None = None
    if interval is not None and omega_c is not None:
        r_interval = (interval[0] / omega_c, interval[1] / omega_c)
    return GroundDiagnosis(
        status=status,
        consistent=status in (GroundStatus.NO_GROUND, GroundStatus.SINGLE, GroundStatus.AMBIGUOUS),
        grounded_phase=grounded,
        candidate_phases=candidates,
        best_fit_phase=best_phase,
        lowest_reading_phase=lowest,
        fault_ratio=ratio,
        fault_ratio_interval=interval,
        fault_resistance_ohm=resistance,
        fault_resistance_interval_ohm=r_interval,
        fault_current_a=current,
        neutral_shift_v=abs(g),
        earth_point_v=g,
        misfit=misfit,
        misfit_by_phase=misfit_by_phase,
        trilateration_misfit=float(batch.trilateration_misfit[0]),
        readings_v=readings,
        tolerance_v=tolerance_v,
        fitted_readings_v=fitted,
        line_voltage_v=line_voltage_v,
        sequence=seq,
        notes=tuple(notes),
        next_steps=tuple(steps),
        locus_angle_rad=phi,
        burden_ohm=burden_ohm,
    )
