"""Which phase is grounded, and through how many ohms, from three voltmeter readings to earth.

Method (our own formulation of textbook geometry):

1. Trilateration. The three source phasors E_k are known (V_LN at 0°, -120°, +120° for the
   declared sequence). Each reading |E_k - V_g| puts the earth point V_g on a circle around
   E_k; the pairwise differences of the squared equations are linear in V_g and give a
   closed-form start, refined by weighted Gauss-Newton. This is the neutral displacement,
   whatever caused it.
2. Locus fit. A single fault of resistance Rf on phase k with balanced capacitance C0 puts
   the earth point on V_g = E_k/(1 + j·x), x = 3ωC0·Rf: a semicircle from E_k (x = 0) to the
   neutral (x → ∞) on the lagging side of E_k. Writing x = tan θ, V_g = E_k·cos θ·e^(-jθ),
   and the readings normalised to V_LN become functions of θ alone:
       faulted phase   sin θ
       lagging phase   √(1 + cos²θ - 2 cos θ cos(120° - θ))
       leading phase   √(1 + cos²θ - 2 cos θ cos(120° + θ))
   For each phase the fit finds the θ whose worst reading residual, in units of the meter
   tolerance, is smallest (a minimax, or Chebyshev, fit: the tolerance is a bound, not a
   standard deviation). A value ≤ 1 means some single fault on that phase explains every
   reading within tolerance. The set of such θ, mapped to Rf, is the uncertainty interval.
3. Decision. If zero displacement fits, no ground is detected (with a lower bound on any
   ground's resistance). If exactly one phase fits, that is the grounded phase; if two do,
   the readings are ambiguous; if none does, the readings are inconsistent with one
   ground and balanced capacitance and are flagged, never forced.

Because the whole locus is fitted, the high-resistance case is handled: once x > √3 the
phase lagging the grounded one reads lower than the grounded phase itself.

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


def locus_readings(theta: FloatArray) -> tuple[FloatArray, FloatArray, FloatArray]:
    """Readings / V_LN of the (faulted, lagging, leading) phases at locus angle θ (rad).

    θ = arctan(3ωC0·Rf): 0 for a bolted fault, π/2 for no fault.
    """
    c = np.cos(theta)
    s = np.sin(theta)
    # 1 + cos²θ - 2 cosθ cos(120° ∓ θ), with cos(120° ∓ θ) = -cosθ/2 ± (√3/2) sinθ
    twice_cc = 2.0 * c * c
    cross = _SQRT3 * c * s
    lag = np.sqrt(np.maximum(1.0 + twice_cc - cross, 0.0))
    lead = np.sqrt(np.maximum(1.0 + twice_cc + cross, 0.0))
    return s, lag, lead


def _minimax(theta: FloatArray, rho: FloatArray, inv_tau: FloatArray) -> FloatArray:
    """Worst |predicted - measured| / tolerance over the three roles.

    theta (n, 3, g); rho, inv_tau (n, 3, 3) = (row, hypothesis, role). Returns (n, 3, g).
    """
    return _worst(*locus_readings(theta), rho, inv_tau)


def _worst(
    faulted: FloatArray, lag: FloatArray, lead: FloatArray, rho: FloatArray, inv_tau: FloatArray
) -> FloatArray:
    """``_minimax`` from readings already computed (broadcastable to (n, 3, g))."""
    worst = np.abs(faulted - rho[:, :, 0:1]) * inv_tau[:, :, 0:1]
    np.maximum(worst, np.abs(lag - rho[:, :, 1:2]) * inv_tau[:, :, 1:2], out=worst)
    np.maximum(worst, np.abs(lead - rho[:, :, 2:3]) * inv_tau[:, :, 2:3], out=worst)
    return worst


_SWEEP = np.linspace(0.0, _HALF_PI, _GRID_SWEEP)
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
    theta: FloatArray, value: FloatArray, step: FloatArray, rho_h: FloatArray, inv_tau_h: FloatArray
) -> tuple[FloatArray, FloatArray]:
    """Golden-section search for the minimum within ±step of θ (any shape (n, k)).

    Never returns worse than the starting point (the bracket need not be unimodal).
    """
    a = np.clip(theta - step, 0.0, _HALF_PI)
    b = np.clip(theta + step, 0.0, _HALF_PI)
    c = b - _INV_PHI * (b - a)
    d = a + _INV_PHI * (b - a)
    fc = _minimax(c[:, :, None], rho_h, inv_tau_h)[:, :, 0]
    fd = _minimax(d[:, :, None], rho_h, inv_tau_h)[:, :, 0]
    for _ in range(_GOLDEN_STEPS):
        left = fc < fd  # the minimum lies in [a, d]
        b = np.where(left, d, b)
        a = np.where(left, a, c)
        x = np.where(left, b - _INV_PHI * (b - a), a + _INV_PHI * (b - a))
        fx = _minimax(x[:, :, None], rho_h, inv_tau_h)[:, :, 0]
        c, d = np.where(left, x, d), np.where(left, c, x)
        fc, fd = np.where(left, fx, fd), np.where(left, fc, fx)
    cand = np.where(fc < fd, c, d)
    cand_f = np.minimum(fc, fd)
    better = cand_f < value
    return np.where(better, cand, theta), np.where(better, cand_f, value)


def _fit_block(
    rho: FloatArray, tau: FloatArray, units: npt.NDArray[np.complex128], perm: IntArray
) -> dict[str, npt.NDArray[np.generic]]:
    """Fit one block of reading sets; rho, tau are (n, 3) per unit of V_LN."""
    n = rho.shape[0]
    g, tri_misfit = _trilaterate(rho, tau, units)

    # Readings rearranged per hypothesis as (faulted, lagging, leading): (n, 3, 3).
    rho_h = rho[:, perm]
    inv_tau_h = 1.0 / tau[:, perm]  # multiply, not divide, in the hot loops
    tau_max = tau.max(axis=1)  # (n,)

    # Start each phase's search at the locus point nearest the trilaterated earth point.
    uk = units[None, :]  # (1, 3)
    rel = (g[:, None] - uk / 2.0) * np.conj(uk)  # centre-relative, rotated to E_k at 0°
    psi = np.angle(rel)  # the locus is psi in [-π, 0], psi = -2θ
    theta0 = np.where(psi <= 0.0, -psi / 2.0, np.where(psi < _HALF_PI, 0.0, _HALF_PI))
    nearest = uk * np.cos(theta0) * np.exp(-1j * theta0)
    dist = np.abs(g[:, None] - nearest)
    half = dist + _WINDOW_TOLERANCES * tau_max[:, None]  # arc length per unit = Δθ
    lo = np.maximum(theta0 - half, 0.0)
    hi = np.minimum(theta0 + half, _HALF_PI)

    # A fine window around that start, plus a sparse sweep of the whole locus so that the
    # best fit of readings far from any locus is not missed. Sorted, so that neighbours on
    # the grid are neighbours on the locus.
    steps = np.linspace(0.0, 1.0, _GRID_WINDOW)
    window = lo[:, :, None] + (hi - lo)[:, :, None] * steps
    # The sweep is the same for every row: its readings are computed once.
    f_sweep = _worst(_SWEEP_FAULTED, _SWEEP_LAG, _SWEEP_LEAD, rho_h, inv_tau_h)
    f_window = _minimax(window, rho_h, inv_tau_h)
    unsorted = np.concatenate([window, np.broadcast_to(_SWEEP, (n, 3, _GRID_SWEEP))], axis=-1)
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


def _bisect(outside: FloatArray, inside: FloatArray, rho_h: FloatArray, inv_tau_h: FloatArray) -> (
    FloatArray
):
    """Boundary of the feasible set between an infeasible and a feasible θ, shape (n, k).

    Where ``outside`` is itself feasible (a locus end), that end is returned.
    """
    f_out = _minimax(outside[:, :, None], rho_h, inv_tau_h)[:, :, 0]
    end_feasible = f_out <= 1.0 + _SLACK
    a = outside.copy()
    b = inside.copy()
    for _ in range(_BISECTIONS):
        mid = 0.5 * (a + b)
        ok = _minimax(mid[:, :, None], rho_h, inv_tau_h)[:, :, 0] <= 1.0 + _SLACK
        b = np.where(ok, mid, b)
        a = np.where(ok, a, mid)
    return np.where(end_feasible, outside, b)


def _theta_to_ratio(theta: FloatArray) -> FloatArray:
    """x = tan θ (dimensionless), inf at θ = π/2 (no fault)."""
    with np.errstate(over="ignore", invalid="ignore"):
        ratio = np.tan(theta)
    return np.where(theta >= _HALF_PI - 1e-12, np.inf, ratio)


def diagnose_ground_batch(
    readings_v: npt.ArrayLike,
    line_voltage_v: float | npt.ArrayLike,
    sequence: PhaseSequence | str = "ABC",
    tolerance: MeterTolerance = MeterTolerance(),  # noqa: B008 - frozen, so a safe default
) -> BatchDiagnosis:
    """Diagnose N sets of phase-to-earth readings (V), array (N, 3) in ``sequence.labels`` order.

    ``line_voltage_v`` (V) is one number or one per set: the measured line voltage is best,
    the nominal will do when the bus sits on it. Results are dimensionless (3ωC0·Rf), so
    this needs neither frequency nor capacitance; ``diagnose_ground`` converts to ohms.
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
        _fit_block(rho[i : i + _CHUNK], tau[i : i + _CHUNK], units, perm)
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
    return BatchDiagnosis(
        labels=labels,
        earth_point_v=g,
        trilateration_misfit=cat("tri").astype(np.float64),
        misfit=misfit,
        ratio=_theta_to_ratio(theta),
        ratio_low=_theta_to_ratio(cat("theta_lo").astype(np.float64)),
        ratio_high=_theta_to_ratio(cat("theta_hi").astype(np.float64)),
        zero_shift_misfit=zero,
        status=status,
        grounded=grounded,
        best=best,
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


def _predicted(
    seq: PhaseSequence, v_ln: float, phase: str, ratio: float
) -> dict[str, float]:
    """Readings (V) a single ground of ratio x on ``phase`` gives, by label."""
    theta = math.atan(ratio) if math.isfinite(ratio) else _HALF_PI
    faulted, lag, lead = locus_readings(np.array(theta))
    return {
        phase: float(faulted) * v_ln,
        seq.lagging(phase): float(lag) * v_ln,
        seq.leading(phase): float(lead) * v_ln,
    }


def _fmt_ohm(value: float) -> str:
    """Ohms for a person: Ω, kΩ or MΩ to three figures."""
    if not math.isfinite(value):
        return "∞"
    if value >= 1e6:
        return f"{value / 1e6:.3g} MΩ"
    if value >= 1e3:
        return f"{value / 1e3:.3g} kΩ"
    return f"{value:.3g} Ω"


def diagnose_ground(
    readings_v: Mapping[str, float],
    line_voltage_v: float,
    sequence: PhaseSequence | str = "ABC",
    *,
    frequency_hz: float | None = None,
    capacitance_f: float | None = None,
    tolerance: MeterTolerance = MeterTolerance(),  # noqa: B008 - frozen, so a safe default
) -> GroundDiagnosis:
    """Grounded phase, fault resistance (Ω) and neutral shift (V) from three readings (V).

    ``readings_v`` maps each phase label to its voltmeter reading to earth; ``capacitance_f``
    is C0, one phase's capacitance to earth (F), assumed equal on the three phases. Without
    frequency and capacitance the phase and the displacement are still found, but not the
    resistance or current. Locus: V_g = E_k/(1 + j3ωC0·Rf) (Mitolo, ch. 9, eqs. 9.14-9.15).
    """
    seq = PhaseSequence.parse(sequence)
    seq.check_labels(list(readings_v), "readings")
    if (frequency_hz is None) != (capacitance_f is None):
        raise ValueError("give both frequency and capacitance, or neither")
    omega_c: float | None = None
    if frequency_hz is not None and capacitance_f is not None:
        if not math.isfinite(frequency_hz) or frequency_hz <= 0:
            raise ValueError(f"frequency must be positive hertz (got {frequency_hz!r})")
        if not math.isfinite(capacitance_f) or capacitance_f <= 0:
            raise ValueError(
                f"capacitance to earth must be a positive number of farads (got {capacitance_f!r})"
            )
        omega_c = 3.0 * 2.0 * math.pi * frequency_hz * capacitance_f
    labels = seq.labels
    values = [float(readings_v[lbl]) for lbl in labels]
    batch = diagnose_ground_batch([values], line_voltage_v, seq, tolerance)
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
    fitted = _predicted(seq, v_ln, best_phase, float(batch.ratio[0, best_i]))

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
                f"Any single ground present is above about {_fmt_ohm(interval[0] / omega_c)}: "
                "below the resolution of these meters; an insulation monitor sees further."
            )
    else:
        ratio = float(batch.ratio[0, best_i])
        if best_phase in candidates:
            interval = (float(batch.ratio_low[0, best_i]), float(batch.ratio_high[0, best_i]))
        if omega_c is not None and candidates:
            # KCL at earth: the fault returns the capacitive current 3ωC0·|V_g|.
            current = omega_c * v_ln * math.cos(math.atan(ratio))
        if status is GroundStatus.SINGLE:
            grounded = best_phase
            text = f"Single ground on {grounded}"
            if omega_c is not None:
                text += f" through about {_fmt_ohm(ratio / omega_c)}"
            notes.append(text + f"; neutral shifted {abs(g):.0f} V.")
            if lowest != grounded:
                notes.append(
                    f"The lowest reading ({lowest}) is NOT the grounded phase: with "
                    "3ωC0·Rf above √3 the phase lagging the grounded one reads lowest."
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
            ceiling = _LEADING_MAX * v_ln
            over = [lbl for lbl in labels if readings[lbl] - tolerance_v[lbl] > ceiling]
            if over:
                notes.append(
                    f"{', '.join(over)} reads above {ceiling:.0f} V, the most any single "
                    f"ground can put on a phase ((1+√7)/2 × V_LN, derived): check the line "
                    "voltage given and the meter."
                )
            other = diagnose_ground_batch([values], line_voltage_v, seq.reversed(), tolerance)
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
    )
