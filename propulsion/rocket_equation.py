"""Tsiolkovsky rocket equation and staging arithmetic.

All inputs and outputs are plain SI floats or numpy arrays: masses in [kg], specific impulse in
[s], speeds in [m/s]. Functions work element-wise on arrays and return a ``float`` when every
input is a scalar.

The caller is expected to have validated user input already; the ``ValueError`` raised here is a
guard against physically impossible numbers reaching the equations.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from propulsion._checks import as_non_negative, as_positive, scalar_or_array
from propulsion.constants import STANDARD_GRAVITY

ArrayLike = float | npt.NDArray[np.float64]


def exhaust_velocity(specific_impulse: ArrayLike) -> ArrayLike:
    r"""
    Effective exhaust velocity from specific impulse.

    Parameters
    ----------
    specific_impulse : float or numpy.ndarray
        Specific impulse [s]. Must be positive.

    Returns
    -------
    exhaust_velocity : float or numpy.ndarray
        Effective exhaust velocity [m/s].

    Raises
    ------
    ValueError
        If the specific impulse is not finite or not positive.

    Notes
    -----
    .. math:: c = I_{sp} g_0

    with :math:`g_0` the standard acceleration of gravity, 9.80665 m/s^2.

    References
    ----------
    .. [1] G. P. Sutton and O. Biblarz, Rocket Propulsion Elements, 9th ed., Wiley, 2017,
       chapter 2 (definitions of specific impulse and effective exhaust velocity).
    """
    isp = as_positive("specific_impulse", specific_impulse)
    return scalar_or_array(isp * STANDARD_GRAVITY)


def ideal_delta_v(
    specific_impulse: ArrayLike, mass_initial: ArrayLike, mass_final: ArrayLike
) -> ArrayLike:
    r"""
    Ideal (drag-free, gravity-free) velocity change from the Tsiolkovsky rocket equation.

    Parameters
    ----------
    specific_impulse : float or numpy.ndarray
        Specific impulse [s]. Must be positive.
    mass_initial : float or numpy.ndarray
        Mass at ignition [kg]. Must be positive.
    mass_final : float or numpy.ndarray
        Mass at burnout [kg]. Must be positive and not larger than ``mass_initial``.

    Returns
    -------
    delta_v : float or numpy.ndarray
        Ideal velocity change [m/s].

    Raises
    ------
    ValueError
        If a mass or the specific impulse is not positive, or ``mass_final > mass_initial``.

    Notes
    -----
    .. math:: \Delta v = I_{sp} g_0 \ln\frac{m_0}{m_f}

    Evaluated as :math:`\ln(1 + (m_0 - m_f)/m_f)` with ``log1p`` so that small burns keep
    full relative precision.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
       Butterworth-Heinemann, 2013, chapter 6 (Orbital maneuvers) and chapter 11.
    .. [2] G. P. Sutton and O. Biblarz, Rocket Propulsion Elements, 9th ed., Wiley, 2017,
       chapter 4 (flight performance).
    """
    isp = as_positive("specific_impulse", specific_impulse)
    m0 = as_positive("mass_initial", mass_initial)
    mf = as_positive("mass_final", mass_final)
    if np.any(mf > m0):
        raise ValueError(
            f"mass_final ({mass_final!r} kg) must not exceed mass_initial ({mass_initial!r} kg)"
        )
    # log1p of the propellant ratio keeps full relative precision for small burns.
    return scalar_or_array(isp * STANDARD_GRAVITY * np.log1p((m0 - mf) / mf))


def mass_ratio_for_delta_v(delta_v: ArrayLike, specific_impulse: ArrayLike) -> ArrayLike:
    r"""
    Mass ratio :math:`m_0/m_f` needed for an ideal velocity change.

    Parameters
    ----------
    delta_v : float or numpy.ndarray
        Required ideal velocity change [m/s]. Must not be negative.
    specific_impulse : float or numpy.ndarray
        Specific impulse [s]. Must be positive.

    Returns
    -------
    mass_ratio : float or numpy.ndarray
        Initial mass divided by final mass [-], at least 1.

    Raises
    ------
    ValueError
        If ``delta_v`` is negative or the specific impulse is not positive.

    Notes
    -----
    .. math:: \frac{m_0}{m_f} = \exp\left(\frac{\Delta v}{I_{sp} g_0}\right)

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
       Butterworth-Heinemann, 2013, chapter 6 (Orbital maneuvers).
    """
    dv = as_non_negative("delta_v", delta_v)
    isp = as_positive("specific_impulse", specific_impulse)
    return scalar_or_array(np.exp(dv / (isp * STANDARD_GRAVITY)))


def final_mass_for_delta_v(
    delta_v: ArrayLike, specific_impulse: ArrayLike, mass_initial: ArrayLike
) -> ArrayLike:
    r"""
    Burnout mass left after an ideal velocity change.

    Parameters
    ----------
    delta_v : float or numpy.ndarray
        Ideal velocity change [m/s]. Must not be negative.
    specific_impulse : float or numpy.ndarray
        Specific impulse [s]. Must be positive.
    mass_initial : float or numpy.ndarray
        Mass at ignition [kg]. Must be positive.

    Returns
    -------
    mass_final : float or numpy.ndarray
        Mass at burnout [kg].

    Raises
    ------
    ValueError
        If an input is out of range (see Parameters).

    Notes
    -----
    .. math:: m_f = m_0 \exp\left(-\frac{\Delta v}{I_{sp} g_0}\right)

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
       Butterworth-Heinemann, 2013, chapter 6 (Orbital maneuvers).
    """
    dv = as_non_negative("delta_v", delta_v)
    isp = as_positive("specific_impulse", specific_impulse)
    m0 = as_positive("mass_initial", mass_initial)
    return scalar_or_array(m0 * np.exp(-dv / (isp * STANDARD_GRAVITY)))


def propellant_for_delta_v(
    delta_v: ArrayLike, specific_impulse: ArrayLike, mass_initial: ArrayLike
) -> ArrayLike:
    r"""
    Propellant mass burnt for an ideal velocity change.

    Parameters
    ----------
    delta_v : float or numpy.ndarray
        Ideal velocity change [m/s]. Must not be negative.
    specific_impulse : float or numpy.ndarray
        Specific impulse [s]. Must be positive.
    mass_initial : float or numpy.ndarray
        Mass at ignition [kg]. Must be positive.

    Returns
    -------
    propellant_mass : float or numpy.ndarray
        Propellant mass burnt [kg].

    Raises
    ------
    ValueError
        If an input is out of range (see Parameters).

    Notes
    -----
    .. math:: \Delta m = m_0 \left[1 - \exp\left(-\frac{\Delta v}{I_{sp} g_0}\right)\right]

    Evaluated with ``expm1`` so that small burns keep full relative precision.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
       Butterworth-Heinemann, 2013, chapter 6 (Orbital maneuvers).
    """
    dv = as_non_negative("delta_v", delta_v)
    isp = as_positive("specific_impulse", specific_impulse)
    m0 = as_positive("mass_initial", mass_initial)
    return scalar_or_array(-m0 * np.expm1(-dv / (isp * STANDARD_GRAVITY)))


def stack_delta_v(
    specific_impulse: ArrayLike, mass_initial: ArrayLike, mass_final: ArrayLike
) -> tuple[npt.NDArray[np.float64], float]:
    r"""
    Ideal velocity change of each stage of a serial stack and of the whole stack.

    Stage 1 is the first to burn. ``mass_initial[i]`` is the mass of the whole remaining stack
    at ignition of stage ``i`` (upper stages and payload included) and ``mass_final[i]`` the
    mass of that stack at burnout of stage ``i``, before its inert mass is dropped.

    Parameters
    ----------
    specific_impulse : float or numpy.ndarray
        Specific impulse of each stage [s]; a scalar applies to every stage.
    mass_initial : numpy.ndarray
        Stack mass at ignition of each stage [kg], 1-D.
    mass_final : numpy.ndarray
        Stack mass at burnout of each stage [kg], 1-D, same length as ``mass_initial``.

    Returns
    -------
    stage_delta_v : numpy.ndarray
        Ideal velocity change of each stage [m/s].
    total_delta_v : float
        Sum over the stages [m/s].

    Raises
    ------
    ValueError
        If the arrays are empty, not 1-D or of different lengths, if any stage has
        ``mass_final > mass_initial``, or if a stage ignites heavier than the stack was at
        burnout of the stage below (``mass_initial[i + 1] > mass_final[i]``).

    Notes
    -----
    .. math:: \Delta v_i = I_{sp,i} g_0 \ln\frac{m_{0,i}}{m_{f,i}}, \qquad
              \Delta v = \sum_i \Delta v_i

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
       Butterworth-Heinemann, 2013, chapter 11 (Rocket vehicle dynamics), staging.
    """
    m0 = np.atleast_1d(as_positive("mass_initial", mass_initial))
    mf = np.atleast_1d(as_positive("mass_final", mass_final))
    if m0.ndim != 1 or mf.ndim != 1 or m0.size == 0 or m0.shape != mf.shape:
        raise ValueError(
            "mass_initial and mass_final must be non-empty 1-D arrays of the same length, "
            f"got shapes {m0.shape} and {mf.shape}"
        )
    isp = as_positive("specific_impulse", specific_impulse)
    if isp.ndim > 1 or (isp.ndim == 1 and isp.shape != m0.shape):
        raise ValueError(
            f"specific_impulse must be a scalar or have one value per stage ({m0.size}), "
            f"got shape {isp.shape}"
        )
    bad = np.flatnonzero(m0[1:] > mf[:-1])
    if bad.size:
        stage = int(bad[0]) + 2
        raise ValueError(
            f"stage {stage} ignition mass ({m0[stage - 1]} kg) exceeds the stack mass at "
            f"burnout of stage {stage - 1} ({mf[stage - 2]} kg)"
        )
    per_stage = np.asarray(ideal_delta_v(isp, m0, mf), dtype=np.float64)
    return per_stage, float(np.sum(per_stage))


def structural_coefficient(inert_mass: ArrayLike, propellant_mass: ArrayLike) -> ArrayLike:
    r"""
    Structural coefficient (structural ratio) of a stage.

    Parameters
    ----------
    inert_mass : float or numpy.ndarray
        Empty (burnout) mass of the stage, without payload or upper stages [kg]. Not negative.
    propellant_mass : float or numpy.ndarray
        Usable propellant mass of the stage [kg]. Not negative.

    Returns
    -------
    structural_coefficient : float or numpy.ndarray
        :math:`\varepsilon` [-], between 0 and 1.

    Raises
    ------
    ValueError
        If a mass is negative or both masses are zero.

    Notes
    -----
    .. math:: \varepsilon = \frac{m_E}{m_E + m_p}

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
       Butterworth-Heinemann, 2013, chapter 11 (Rocket vehicle dynamics), staging.
    """
    mi, mp = _stage_masses(inert_mass, propellant_mass)
    return scalar_or_array(mi / (mi + mp))


def propellant_mass_fraction(inert_mass: ArrayLike, propellant_mass: ArrayLike) -> ArrayLike:
    r"""
    Propellant mass fraction of a stage, payload excluded.

    Parameters
    ----------
    inert_mass : float or numpy.ndarray
        Empty (burnout) mass of the stage [kg]. Not negative.
    propellant_mass : float or numpy.ndarray
        Usable propellant mass of the stage [kg]. Not negative.

    Returns
    -------
    propellant_mass_fraction : float or numpy.ndarray
        :math:`m_p / (m_E + m_p)` [-], equal to one minus the structural coefficient.

    Raises
    ------
    ValueError
        If a mass is negative or both masses are zero.

    Notes
    -----
    .. math:: \zeta = \frac{m_p}{m_E + m_p} = 1 - \varepsilon

    Some texts (e.g. Sutton and Biblarz) divide by the full initial mass including payload
    instead; this function uses the stage-only definition.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
       Butterworth-Heinemann, 2013, chapter 11 (Rocket vehicle dynamics), staging.
    """
    mi, mp = _stage_masses(inert_mass, propellant_mass)
    return scalar_or_array(mp / (mi + mp))


def payload_ratio(
    payload_mass: ArrayLike, inert_mass: ArrayLike, propellant_mass: ArrayLike
) -> ArrayLike:
    r"""
    Payload ratio of a stage as defined by Curtis.

    Parameters
    ----------
    payload_mass : float or numpy.ndarray
        Mass carried by the stage (true payload plus any upper stages) [kg]. Not negative.
    inert_mass : float or numpy.ndarray
        Empty (burnout) mass of the stage [kg]. Not negative.
    propellant_mass : float or numpy.ndarray
        Usable propellant mass of the stage [kg]. Not negative.

    Returns
    -------
    payload_ratio : float or numpy.ndarray
        :math:`\lambda` [-].

    Raises
    ------
    ValueError
        If a mass is negative or inert plus propellant mass is zero.

    Notes
    -----
    .. math:: \lambda = \frac{m_{PL}}{m_E + m_p}

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
       Butterworth-Heinemann, 2013, chapter 11 (Rocket vehicle dynamics), staging.
    """
    mpl = as_non_negative("payload_mass", payload_mass)
    mi, mp = _stage_masses(inert_mass, propellant_mass)
    return scalar_or_array(mpl / (mi + mp))


def _stage_masses(
    inert_mass: ArrayLike, propellant_mass: ArrayLike
) -> tuple[npt.NDArray[np.float64], npt.NDArray[np.float64]]:
    mi = as_non_negative("inert_mass", inert_mass)
    mp = as_non_negative("propellant_mass", propellant_mass)
    if np.any(mi + mp <= 0.0):
        raise ValueError("inert_mass + propellant_mass must be greater than zero")
    return mi, mp
