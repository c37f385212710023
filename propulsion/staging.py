"""Optimal staging of a serial rocket: the delta-v split between stages that minimises liftoff mass.

All inputs and outputs are plain SI floats or numpy arrays: masses in [kg], specific impulse in
[s], speeds in [m/s]. Stages are numbered from the bottom: index 0 is the first stage to burn.

Two independent solvers return the same :class:`StagingSolution`:

* :func:`optimal_staging` solves the classical Lagrange-multiplier conditions with a bracketing
  root finder (one unknown, whatever the number of stages);
* :func:`direct_staging` minimises the liftoff mass over the delta-v split with a general
  constrained optimiser. It exists as a cross-check of the first and reports its convergence.

:func:`compare_stage_counts` sizes 1, 2, 3 ... identical stages for the same job.

The ``ValueError`` raised here guards against physically impossible input (a structural
coefficient outside (0, 1), a negative delta-v, ...). A delta-v the stages cannot reach is not
an error: the solution comes back with ``feasible=False``, a ``reason`` and NaN masses.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
from scipy.optimize import brentq, minimize

from propulsion.constants import STANDARD_GRAVITY

FloatArray = npt.NDArray[np.float64]
StageValues = float | Sequence[float] | FloatArray

_LAGRANGE = "lagrange"
_DIRECT = "direct"


@dataclass(frozen=True, eq=False)
class StagingSolution:
    """
    Sizing of a serial stack of stages for a payload and a total ideal delta-v.

    Per-stage arrays have one entry per stage, first stage (bottom, first to burn) first. The
    arrays are read-only.

    Attributes
    ----------
    mass_ratio : numpy.ndarray
        Mass ratio of each stage burn, stack mass at ignition over stack mass at burnout
        (before the stage's inert mass is dropped) [-].
    delta_v : numpy.ndarray
        Ideal velocity change of each stage [m/s]; the entries add up to the requested total.
    stage_mass : numpy.ndarray
        Mass of each stage alone, inert plus propellant [kg].
    inert_mass : numpy.ndarray
        Inert (burnout) mass of each stage [kg].
    propellant_mass : numpy.ndarray
        Propellant mass of each stage [kg].
    initial_mass : numpy.ndarray
        Mass of the whole remaining stack (this stage, the stages above it and the payload) at
        ignition of each stage [kg].
    liftoff_mass : float
        Mass of the whole vehicle at liftoff, payload included [kg].
    payload_mass : float
        Payload carried by the last stage [kg].
    payload_fraction : float
        ``payload_mass / liftoff_mass`` [-].
    multiplier : float
        Lagrange multiplier :math:`\\eta` [s/m], equal to :math:`d \\ln m_0 / d\\Delta v` at the
        optimum. NaN when the solver does not produce it (:func:`direct_staging`) or when the
        problem is infeasible.
    feasible : bool
        False when the stages cannot reach the delta-v with any finite mass.
    reason : str
        Why the problem is infeasible; empty when it is feasible.
    converged : bool
        True when the numerical solver met its tolerance.
    message : str
        The solver's own report (iterations, termination message, stages left without work).
    method : str
        ``"lagrange"`` or ``"direct"``.
    """

    mass_ratio: FloatArray
    delta_v: FloatArray
    stage_mass: FloatArray
    inert_mass: FloatArray
    propellant_mass: FloatArray
    initial_mass: FloatArray
    liftoff_mass: float
    payload_mass: float
    payload_fraction: float
    multiplier: float
    feasible: bool
    reason: str
    converged: bool
    message: str
    method: str

    @property
    def stage_count(self) -> int:
        """Number of stages in the stack."""
        return int(self.mass_ratio.size)


# --- input checks ----------------------------------------------------------------------------


def _stage_inputs(
    delta_v: float,
    specific_impulse: StageValues,
    structural_coefficient: StageValues,
    payload_mass: float,
) -> tuple[float, FloatArray, FloatArray, float]:
    """Check the inputs; return delta-v, exhaust velocities, structural coefficients, payload."""
    dv = float(delta_v)
    if not np.isfinite(dv) or dv < 0.0:
        raise ValueError(f"delta_v must be finite and not negative, got {delta_v!r}")
    payload = float(payload_mass)
    if not np.isfinite(payload) or payload <= 0.0:
        raise ValueError(f"payload_mass must be finite and greater than zero, got {payload_mass!r}")
    isp = np.atleast_1d(np.asarray(specific_impulse, dtype=np.float64))
    eps = np.atleast_1d(np.asarray(structural_coefficient, dtype=np.float64))
    if isp.ndim != 1 or eps.ndim != 1 or isp.size == 0 or eps.size == 0:
        raise ValueError(
            "specific_impulse and structural_coefficient must be scalars or non-empty 1-D "
            f"arrays, got shapes {isp.shape} and {eps.shape}"
        )
    if isp.size != eps.size:
        if isp.size == 1:
            isp = np.full(eps.shape, isp[0])
        elif eps.size == 1:
            eps = np.full(isp.shape, eps[0])
        else:
            raise ValueError(
                "specific_impulse and structural_coefficient need one value per stage, got "
                f"{isp.size} and {eps.size} values"
            )
    if not np.all(np.isfinite(isp)) or np.any(isp <= 0.0):
        raise ValueError(
            f"specific_impulse must be finite and greater than zero, got {specific_impulse!r}"
        )
    if not np.all(np.isfinite(eps)) or np.any(eps <= 0.0) or np.any(eps >= 1.0):
        raise ValueError(
            f"structural_coefficient must lie strictly between 0 and 1, got "
            f"{structural_coefficient!r}"
        )
    return dv, isp * STANDARD_GRAVITY, eps, payload


def _delta_v_limit(c: FloatArray, eps: FloatArray) -> float:
    """Supremum of the reachable delta-v: every stage at mass ratio 1/eps, infinite mass."""
    return float(np.sum(-c * np.log(eps)))


def _readonly(arr: FloatArray) -> FloatArray:
    out = np.array(arr, dtype=np.float64)
    out.setflags(write=False)
    return out


def _infeasible(
    n: int, dv: float, limit: float, payload: float, method: str, message: str
) -> StagingSolution:
    nan = np.full(n, np.nan)
    reason = (
        f"a delta-v of {dv:.6g} m/s is out of reach: with these specific impulses and "
        f"structural coefficients no finite vehicle exceeds {limit:.6g} m/s "
        "(sum of c_i ln(1/eps_i), every stage full of propellant and massless payload)"
    )
    return StagingSolution(
        mass_ratio=_readonly(nan),
        delta_v=_readonly(nan),
        stage_mass=_readonly(nan),
        inert_mass=_readonly(nan),
        propellant_mass=_readonly(nan),
        initial_mass=_readonly(nan),
        liftoff_mass=float("nan"),
        payload_mass=payload,
        payload_fraction=float("nan"),
        multiplier=float("nan"),
        feasible=False,
        reason=reason,
        converged=False,
        message=message,
        method=method,
    )


def _build_stack(
    delta_v: FloatArray,
    mass_ratio: FloatArray,
    growth: FloatArray,
    eps: FloatArray,
    payload: float,
    multiplier: float,
    converged: bool,
    message: str,
    method: str,
) -> StagingSolution:
    """Size the stages from the top down; ``growth[i]`` is stage mass over mass above it."""
    count = growth.size
    stage_mass = np.empty(count)
    initial_mass = np.empty(count)
    above = payload
    for i in range(count - 1, -1, -1):
        stage_mass[i] = growth[i] * above
        above += stage_mass[i]
        initial_mass[i] = above
    liftoff = float(initial_mass[0])
    return StagingSolution(
        mass_ratio=_readonly(mass_ratio),
        delta_v=_readonly(delta_v),
        stage_mass=_readonly(stage_mass),
        inert_mass=_readonly(eps * stage_mass),
        propellant_mass=_readonly((1.0 - eps) * stage_mass),
        initial_mass=_readonly(initial_mass),
        liftoff_mass=liftoff,
        payload_mass=payload,
        payload_fraction=payload / liftoff,
        multiplier=multiplier,
        feasible=True,
        reason="",
        converged=converged,
        message=message,
        method=method,
    )


def _idle_note(delta_v: FloatArray) -> str:
    idle = [str(i + 1) for i in np.flatnonzero(delta_v == 0.0)]
    if not idle:
        return ""
    noun = "stage" if len(idle) == 1 else "stages"
    verb = "carries" if len(idle) == 1 else "carry"
    return f"; {noun} {', '.join(idle)} {verb} no delta-v at the optimum (zero mass)"


# --- Lagrange multiplier solution ------------------------------------------------------------


def optimal_staging(
    delta_v: float,
    specific_impulse: StageValues,
    structural_coefficient: StageValues,
    payload_mass: float,
) -> StagingSolution:
    r"""
    Minimum-liftoff-mass sizing of a serial stack by the Lagrange-multiplier method.

    The stack of N stages (N = number of values given, first stage first) must give the payload
    a total ideal (drag-free, gravity-free) velocity change ``delta_v``. Each stage is described
    by its specific impulse and its structural coefficient; the solver chooses how much
    delta-v each stage provides so that the liftoff mass is as small as possible.

    Parameters
    ----------
    delta_v : float
        Total ideal velocity change required of the stack [m/s]. Not negative.
    specific_impulse : float or sequence of float or numpy.ndarray
        Specific impulse of each stage [s], first stage first. Positive. A scalar applies to
        every stage.
    structural_coefficient : float or sequence of float or numpy.ndarray
        Structural coefficient of each stage,
        :math:`\varepsilon_i = m_{E,i} / (m_{E,i} + m_{p,i})` [-], strictly between 0 and 1.
        A scalar applies to every stage.
    payload_mass : float
        Payload carried by the last stage [kg]. Positive.

    Returns
    -------
    solution : StagingSolution
        Mass ratio, delta-v, stage, inert, propellant and ignition masses of each stage [kg],
        the liftoff mass [kg], the payload fraction [-] and the multiplier :math:`\eta` [s/m].
        When ``delta_v`` is out of reach, ``feasible`` is False, ``reason`` says why and the
        masses are NaN. ``converged`` is the root finder's own flag.

    Raises
    ------
    ValueError
        If an input is out of range (see Parameters) or the two stage arrays differ in length.

    Notes
    -----
    With exhaust velocities :math:`c_i = I_{sp,i} g_0` the optimum satisfies, for a Lagrange
    multiplier :math:`\eta`,

    .. math::

        n_i = \frac{c_i \eta - 1}{c_i \varepsilon_i \eta}, \qquad
        \sum_i c_i \ln n_i = \Delta v

    and the stages are sized from the top down, each carrying everything above it
    (:math:`m_{above}`, the payload for the last stage):

    .. math::

        m_i = \frac{n_i - 1}{1 - n_i \varepsilon_i} m_{above}, \quad
        m_{E,i} = \varepsilon_i m_i, \quad m_{p,i} = (1 - \varepsilon_i) m_i

    The root is found in :math:`u = 1/\eta` [m/s] with ``scipy.optimize.brentq``. Each term
    :math:`c_i \ln n_i` falls as :math:`u` grows, so the bracket is exact and finite:
    at :math:`u \to 0` every :math:`n_i \to 1/\varepsilon_i` and the sum reaches the limit
    :math:`\sum_i c_i \ln(1/\varepsilon_i)` (no finite vehicle reaches it, hence the
    feasibility test); at :math:`u = \max_i c_i (1 - \varepsilon_i)` every stage has
    :math:`n_i \le 1` and the sum is zero. Working in :math:`u` also gives
    :math:`1 - n_i \varepsilon_i = u / c_i` without cancellation, so the masses keep their
    precision close to the limit.

    The classical formula needs :math:`n_i > 1`, i.e. :math:`u < c_i (1 - \varepsilon_i)`,
    for every stage. For a small delta-v and unlike stages this can fail for the stage with the
    smallest :math:`c_i (1 - \varepsilon_i)`. The problem is convex in :math:`\ln n_i`, and the
    Kuhn-Tucker conditions with the bound :math:`n_i \ge 1` give :math:`n_i = 1` (zero
    delta-v, zero mass) for such a stage; this function applies that bound, and ``message``
    names the stages left without work. When every stage works the result is the classical
    one.

    At the optimum :math:`\eta = d \ln m_0 / d \Delta v`: the multiplier is the relative
    growth of the liftoff mass per metre per second of extra delta-v.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
       Butterworth-Heinemann, 2013, section 11.6 (Optimal staging).
    .. [2] S. Boyd and L. Vandenberghe, Convex Optimization, Cambridge University Press, 2004,
       chapter 5 (Duality; Karush-Kuhn-Tucker optimality conditions).
    """
    dv, c, eps, payload = _stage_inputs(
        delta_v, specific_impulse, structural_coefficient, payload_mass
    )
    limit = _delta_v_limit(c, eps)
    if dv >= limit:
        return _infeasible(c.size, dv, limit, payload, _LAGRANGE, "not solved: infeasible")

    capacity = c * (1.0 - eps)  # a stage works (n_i > 1) while u < c_i (1 - eps_i)

    def log_ratios(u: float) -> FloatArray:
        # ln n_i = ln(1 + (c_i (1 - eps_i) - u) / (c_i eps_i)), clipped at n_i = 1.
        return np.log1p(np.maximum(capacity - u, 0.0) / (c * eps))

    def residual(u: float) -> float:
        return float(np.sum(c * log_ratios(u))) - dv

    u_max = float(np.max(capacity))
    if dv == 0.0:
        u, converged, message = u_max, True, "zero delta-v: no stage needs propellant"
    else:
        # residual(0) = limit - dv > 0 and residual(u_max) = -dv < 0.
        u, result = brentq(
            residual, 0.0, u_max, xtol=1e-300, rtol=4.0 * np.finfo(float).eps,
            maxiter=500, full_output=True, disp=False,
        )  # fmt: skip
        converged = bool(result.converged)
        message = f"brentq: {result.flag} after {result.iterations} iterations"

    log_n = log_ratios(u)
    works = capacity > u
    stage_dv = c * log_n
    # growth = (n - 1)/(1 - n eps); 1 - n eps = u/c for a working stage, n - 1 = 0 otherwise.
    growth = np.where(works, np.expm1(log_n) * c / u, 0.0)
    return _build_stack(
        delta_v=stage_dv,
        mass_ratio=np.exp(log_n),
        growth=growth,
        eps=eps,
        payload=payload,
        multiplier=1.0 / u,
        converged=converged,
        message=message + _idle_note(stage_dv),
        method=_LAGRANGE,
    )


# --- direct numerical optimisation -----------------------------------------------------------


def direct_staging(
    delta_v: float,
    specific_impulse: StageValues,
    structural_coefficient: StageValues,
    payload_mass: float,
) -> StagingSolution:
    r"""
    Minimum-liftoff-mass sizing of a serial stack by direct numerical optimisation.

    Solves the same problem as :func:`optimal_staging` without the multiplier: the logarithm of
    the liftoff mass is minimised over the delta-v of each stage with
    ``scipy.optimize.minimize`` (SLSQP), under the equality constraint that the stage delta-v
    add up to the total. It serves as an independent check of the Lagrange solution.

    Parameters
    ----------
    delta_v : float
        Total ideal velocity change required of the stack [m/s]. Not negative.
    specific_impulse : float or sequence of float or numpy.ndarray
        Specific impulse of each stage [s], first stage first. Positive. A scalar applies to
        every stage.
    structural_coefficient : float or sequence of float or numpy.ndarray
        Structural coefficient of each stage [-], strictly between 0 and 1. A scalar applies to
        every stage.
    payload_mass : float
        Payload carried by the last stage [kg]. Positive.

    Returns
    -------
    solution : StagingSolution
        As for :func:`optimal_staging`, with ``multiplier`` NaN. ``converged`` is True only
        when SLSQP reports success *and* the returned split meets the delta-v constraint to
        1e-9 relative; ``message`` carries SLSQP's own termination message. When ``delta_v``
        is out of reach the optimiser is not run: ``feasible`` and ``converged`` are False.

    Raises
    ------
    ValueError
        If an input is out of range (see Parameters) or the two stage arrays differ in length.

    Notes
    -----
    With :math:`n_i = \exp(\Delta v_i / c_i)` the stage masses of a given split follow from

    .. math::

        \ln\frac{m_0}{m_{PL}} = \sum_i \ln\frac{n_i (1 - \varepsilon_i)}{1 - n_i \varepsilon_i},
        \qquad
        \frac{\partial}{\partial \Delta v_i} \ln\frac{m_0}{m_{PL}}
            = \frac{1}{c_i (1 - n_i \varepsilon_i)}

    which is minimised subject to :math:`\sum_i \Delta v_i = \Delta v` and
    :math:`0 \le \Delta v_i < c_i \ln(1/\varepsilon_i)`. The unknowns are scaled by the total
    delta-v, the gradient is analytic, and the start is the split in proportion to each
    stage's reach :math:`c_i \ln(1/\varepsilon_i)`, which is always inside the bounds.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
       Butterworth-Heinemann, 2013, section 11.6 (Optimal staging).
    .. [2] D. Kraft, A Software Package for Sequential Quadratic Programming, DFVLR-FB 88-28,
       1988 (the SLSQP algorithm).
    """
    dv, c, eps, payload = _stage_inputs(
        delta_v, specific_impulse, structural_coefficient, payload_mass
    )
    reach = -c * np.log(eps)
    limit = float(np.sum(reach))
    if dv >= limit:
        return _infeasible(c.size, dv, limit, payload, _DIRECT, "optimiser not run: infeasible")
    if dv == 0.0:
        zero = np.zeros(c.size)
        return _build_stack(
            zero, np.ones(c.size), zero, eps, payload, float("nan"), True,
            "zero delta-v: no stage needs propellant", _DIRECT,
        )  # fmt: skip

    def one_minus_n_eps(x: FloatArray) -> FloatArray:
        # 1 - eps exp(dv_i / c_i), evaluated without cancellation.
        return np.asarray(-np.expm1(np.log(eps) + x * dv / c), dtype=np.float64)

    def objective(x: FloatArray) -> float:
        return float(np.sum(x * dv / c + np.log1p(-eps) - np.log(one_minus_n_eps(x))))

    def gradient(x: FloatArray) -> FloatArray:
        return np.asarray(dv / (c * one_minus_n_eps(x)), dtype=np.float64)

    # Stay a hair inside each stage's reach, where the mass is infinite.
    upper = reach / dv * (1.0 - 1e-12)
    result = minimize(
        objective,
        x0=reach / limit,
        jac=gradient,
        method="SLSQP",
        bounds=list(zip(np.zeros(c.size), upper, strict=True)),
        constraints=[
            {
                "type": "eq",
                "fun": lambda x: float(np.sum(x)) - 1.0,
                "jac": lambda x: np.ones_like(x),
            }
        ],
        options={"ftol": 1e-15, "maxiter": 500},
    )
    x = np.clip(np.asarray(result.x, dtype=np.float64), 0.0, upper)
    stage_dv = x * dv
    meets_constraint = abs(float(np.sum(stage_dv)) - dv) <= 1e-9 * dv
    converged = bool(result.success) and meets_constraint and bool(np.isfinite(result.fun))
    message = f"SLSQP: {result.message} after {result.nit} iterations"
    if bool(result.success) and not meets_constraint:
        message += "; the returned split misses the delta-v constraint"
    log_n = stage_dv / c
    growth = np.expm1(log_n) / one_minus_n_eps(x)
    return _build_stack(
        delta_v=stage_dv,
        mass_ratio=np.exp(log_n),
        growth=growth,
        eps=eps,
        payload=payload,
        multiplier=float("nan"),
        converged=converged,
        message=message + _idle_note(stage_dv),
        method=_DIRECT,
    )


# --- stage-count study -----------------------------------------------------------------------


def compare_stage_counts(
    delta_v: float,
    specific_impulse: float,
    structural_coefficient: float,
    payload_mass: float,
    counts: Sequence[int] = (1, 2, 3),
) -> list[StagingSolution]:
    r"""
    Optimal sizing of 1, 2, 3 ... identical stages for the same payload and delta-v.

    Parameters
    ----------
    delta_v : float
        Total ideal velocity change required of the stack [m/s]. Not negative.
    specific_impulse : float
        Specific impulse of every stage [s]. Positive.
    structural_coefficient : float
        Structural coefficient of every stage [-], strictly between 0 and 1.
    payload_mass : float
        Payload carried by the last stage [kg]. Positive.
    counts : sequence of int
        Numbers of stages to size, each at least 1.

    Returns
    -------
    solutions : list of StagingSolution
        One :func:`optimal_staging` result per entry of ``counts``, in the same order.
        Counts that cannot reach ``delta_v`` come back with ``feasible=False``.

    Raises
    ------
    ValueError
        If an input is out of range or a count is not a positive integer.

    Notes
    -----
    For N identical stages the optimum splits the delta-v evenly,

    .. math:: n = \exp\left(\frac{\Delta v}{N c}\right), \qquad
              \frac{m_0}{m_{PL}} = \left[\frac{n (1 - \varepsilon)}{1 - n \varepsilon}\right]^N

    and N stages can reach at most :math:`N c \ln(1/\varepsilon)`.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
       Butterworth-Heinemann, 2013, section 11.6 (Optimal staging).
    """
    isp = float(specific_impulse)
    eps = float(structural_coefficient)
    solutions = []
    for count in counts:
        if isinstance(count, bool) or int(count) != count or count < 1:
            raise ValueError(f"stage counts must be positive integers, got {count!r}")
        n = int(count)
        solutions.append(optimal_staging(delta_v, [isp] * n, [eps] * n, payload_mass))
    return solutions
