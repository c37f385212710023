"""Two-body orbit formulas: circular, escape and vis-viva speeds, Hohmann transfers, plane changes,
vertical climbs and the speed gift of Earth's rotation.

All inputs and outputs are plain SI floats or numpy arrays: radii in [m] measured from the
centre of the central body, speeds in [m/s], times in [s], angles in [rad], gravitational
parameters in [m^3/s^2]. The gravitational parameter defaults to Earth's (WGS 84). Functions
work element-wise on arrays and return a ``float`` when every input is a scalar.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from propulsion._checks import as_finite, as_non_negative, as_positive, scalar_or_array
from propulsion.constants import (
    EARTH_EQUATORIAL_RADIUS,
    EARTH_MU,
    EARTH_ROTATION_RATE,
    STANDARD_GRAVITY,
)

ArrayLike = float | npt.NDArray[np.float64]


def _vis_viva(
    r: npt.NDArray[np.float64], a: npt.NDArray[np.float64], mu: npt.NDArray[np.float64]
) -> npt.NDArray[np.float64]:
    energy_term = 2.0 / r - 1.0 / a
    if np.any(energy_term < 0.0):
        raise ValueError(
            "radius lies beyond the apoapsis of the orbit (2/r - 1/a < 0): "
            "no real speed exists there"
        )
    return np.asarray(np.sqrt(mu * energy_term), dtype=np.float64)


def circular_speed(radius: ArrayLike, mu: ArrayLike = EARTH_MU) -> ArrayLike:
    r"""
    Speed on a circular orbit.

    Parameters
    ----------
    radius : float or numpy.ndarray
        Orbit radius from the centre of the central body [m]. Must be positive.
    mu : float or numpy.ndarray, default EARTH_MU
        Gravitational parameter of the central body [m^3/s^2].

    Returns
    -------
    speed : float or numpy.ndarray
        Circular orbital speed [m/s].

    Raises
    ------
    ValueError
        If ``radius`` or ``mu`` is not positive.

    Notes
    -----
    .. math:: v_c = \sqrt{\mu / r}

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
       Butterworth-Heinemann, 2013, chapter 2 (circular orbits).
    .. [2] D. A. Vallado, Fundamentals of Astrodynamics and Applications, 4th ed.,
       Microcosm Press, 2013, chapter 1.
    """
    r = as_positive("radius", radius)
    m = as_positive("mu", mu)
    return scalar_or_array(np.sqrt(m / r))


def vis_viva_speed(
    radius: ArrayLike, semi_major_axis: ArrayLike, mu: ArrayLike = EARTH_MU
) -> ArrayLike:
    r"""
    Orbital speed at a given radius from the vis-viva equation.

    Parameters
    ----------
    radius : float or numpy.ndarray
        Distance from the centre of the central body [m]. Must be positive.
    semi_major_axis : float or numpy.ndarray
        Semi-major axis of the orbit [m]; positive for ellipses, negative for hyperbolas,
        ``numpy.inf`` is not accepted (use :func:`escape_speed` for a parabola).
    mu : float or numpy.ndarray, default EARTH_MU
        Gravitational parameter of the central body [m^3/s^2].

    Returns
    -------
    speed : float or numpy.ndarray
        Orbital speed [m/s].

    Raises
    ------
    ValueError
        If ``radius`` or ``mu`` is not positive, ``semi_major_axis`` is zero, or the radius
        lies beyond the apoapsis of an ellipse (:math:`r > 2a`).

    Notes
    -----
    .. math:: v = \sqrt{\mu \left(\frac{2}{r} - \frac{1}{a}\right)}

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
       Butterworth-Heinemann, 2013, chapter 2 (energy equation).
    .. [2] D. A. Vallado, Fundamentals of Astrodynamics and Applications, 4th ed.,
       Microcosm Press, 2013, chapter 1 (vis-viva equation).
    """
    r = as_positive("radius", radius)
    a = as_finite("semi_major_axis", semi_major_axis)
    if np.any(a == 0.0):
        raise ValueError("semi_major_axis must not be zero")
    m = as_positive("mu", mu)
    return scalar_or_array(_vis_viva(r, a, m))


def escape_speed(radius: ArrayLike, mu: ArrayLike = EARTH_MU) -> ArrayLike:
    r"""
    Escape (parabolic) speed at a given radius.

    Parameters
    ----------
    radius : float or numpy.ndarray
        Distance from the centre of the central body [m]. Must be positive.
    mu : float or numpy.ndarray, default EARTH_MU
        Gravitational parameter of the central body [m^3/s^2].

    Returns
    -------
    speed : float or numpy.ndarray
        Escape speed [m/s].

    Raises
    ------
    ValueError
        If ``radius`` or ``mu`` is not positive.

    Notes
    -----
    .. math:: v_{esc} = \sqrt{2 \mu / r}

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
       Butterworth-Heinemann, 2013, chapter 2 (parabolic trajectories).
    """
    r = as_positive("radius", radius)
    m = as_positive("mu", mu)
    return scalar_or_array(np.sqrt(2.0 * m / r))


@dataclass(frozen=True)
class HohmannTransfer:
    """
    Result of a Hohmann transfer between two coplanar circular orbits.

    Attributes
    ----------
    first_burn : float or numpy.ndarray
        Magnitude of the burn that leaves the initial circle [m/s].
    second_burn : float or numpy.ndarray
        Magnitude of the burn that circularises at the final radius [m/s].
    total : float or numpy.ndarray
        ``first_burn + second_burn`` [m/s].
    transfer_time : float or numpy.ndarray
        Coast time on the transfer ellipse, half its period [s].
    """

    first_burn: ArrayLike
    second_burn: ArrayLike
    total: ArrayLike
    transfer_time: ArrayLike


def transfer_burn(
    radius_circular: ArrayLike, radius_opposite_apsis: ArrayLike, mu: ArrayLike = EARTH_MU
) -> ArrayLike:
    r"""
    Tangential burn that turns a circular orbit into an ellipse with a chosen opposite apsis.

    This is the first burn of a Hohmann transfer. With ``radius_opposite_apsis`` smaller than
    ``radius_circular`` it is a retrograde burn that lowers the opposite side of the orbit,
    for instance a deorbit burn that drops perigee into the atmosphere.

    Parameters
    ----------
    radius_circular : float or numpy.ndarray
        Radius of the initial circular orbit, where the burn is made [m].
    radius_opposite_apsis : float or numpy.ndarray
        Radius of the apsis half an orbit later on the new ellipse [m].
    mu : float or numpy.ndarray, default EARTH_MU
        Gravitational parameter of the central body [m^3/s^2].

    Returns
    -------
    delta_v : float or numpy.ndarray
        Magnitude of the burn [m/s].

    Raises
    ------
    ValueError
        If a radius or ``mu`` is not positive.

    Notes
    -----
    .. math:: \Delta v = \left| \sqrt{\mu\left(\frac{2}{r_1} - \frac{2}{r_1 + r_2}\right)}
              - \sqrt{\frac{\mu}{r_1}} \right|

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
       Butterworth-Heinemann, 2013, chapter 6 (Hohmann transfer).
    .. [2] D. A. Vallado, Fundamentals of Astrodynamics and Applications, 4th ed.,
       Microcosm Press, 2013, chapter 6 (Orbital maneuvering), Hohmann transfer.
    """
    r1 = as_positive("radius_circular", radius_circular)
    r2 = as_positive("radius_opposite_apsis", radius_opposite_apsis)
    m = as_positive("mu", mu)
    v_circle = np.sqrt(m / r1)
    v_ellipse = _vis_viva(r1, 0.5 * (r1 + r2), m)
    return scalar_or_array(np.abs(v_ellipse - v_circle))


def circularisation_burn(
    radius_apsis: ArrayLike, radius_opposite_apsis: ArrayLike, mu: ArrayLike = EARTH_MU
) -> ArrayLike:
    r"""
    Tangential burn at an apsis that turns an ellipse into the circle through that apsis.

    Parameters
    ----------
    radius_apsis : float or numpy.ndarray
        Radius of the apsis where the burn is made, equal to the radius of the target
        circle [m].
    radius_opposite_apsis : float or numpy.ndarray
        Radius of the other apsis of the ellipse before the burn [m].
    mu : float or numpy.ndarray, default EARTH_MU
        Gravitational parameter of the central body [m^3/s^2].

    Returns
    -------
    delta_v : float or numpy.ndarray
        Magnitude of the burn [m/s].

    Raises
    ------
    ValueError
        If a radius or ``mu`` is not positive.

    Notes
    -----
    .. math:: \Delta v = \left| \sqrt{\frac{\mu}{r_1}}
              - \sqrt{\mu\left(\frac{2}{r_1} - \frac{2}{r_1 + r_2}\right)} \right|

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
       Butterworth-Heinemann, 2013, chapter 6 (Hohmann transfer).
    .. [2] D. A. Vallado, Fundamentals of Astrodynamics and Applications, 4th ed.,
       Microcosm Press, 2013, chapter 6 (Orbital maneuvering), Hohmann transfer.
    """
    r1 = as_positive("radius_apsis", radius_apsis)
    r2 = as_positive("radius_opposite_apsis", radius_opposite_apsis)
    m = as_positive("mu", mu)
    v_circle = np.sqrt(m / r1)
    v_ellipse = _vis_viva(r1, 0.5 * (r1 + r2), m)
    return scalar_or_array(np.abs(v_circle - v_ellipse))


def hohmann_transfer(
    radius_initial: ArrayLike, radius_final: ArrayLike, mu: ArrayLike = EARTH_MU
) -> HohmannTransfer:
    r"""
    Two-burn Hohmann transfer between coplanar circular orbits, raising or lowering.

    Parameters
    ----------
    radius_initial : float or numpy.ndarray
        Radius of the initial circular orbit [m].
    radius_final : float or numpy.ndarray
        Radius of the final circular orbit [m].
    mu : float or numpy.ndarray, default EARTH_MU
        Gravitational parameter of the central body [m^3/s^2].

    Returns
    -------
    transfer : HohmannTransfer
        Burn magnitudes [m/s], their sum [m/s] and the transfer time [s].

    Raises
    ------
    ValueError
        If a radius or ``mu`` is not positive.

    Notes
    -----
    With :math:`a_t = (r_1 + r_2)/2`,

    .. math:: \Delta v_1 = \left|\sqrt{\mu(2/r_1 - 1/a_t)} - \sqrt{\mu/r_1}\right|, \quad
              \Delta v_2 = \left|\sqrt{\mu/r_2} - \sqrt{\mu(2/r_2 - 1/a_t)}\right|, \quad
              t = \pi\sqrt{a_t^3/\mu}

    References
    ----------
    .. [1] D. A. Vallado, Fundamentals of Astrodynamics and Applications, 4th ed.,
       Microcosm Press, 2013, chapter 6 (Orbital maneuvering), Hohmann transfer.
    .. [2] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
       Butterworth-Heinemann, 2013, chapter 6 (Hohmann transfer).
    """
    r1 = as_positive("radius_initial", radius_initial)
    r2 = as_positive("radius_final", radius_final)
    m = as_positive("mu", mu)
    a_t = 0.5 * (r1 + r2)
    first = np.abs(_vis_viva(r1, a_t, m) - np.sqrt(m / r1))
    second = np.abs(np.sqrt(m / r2) - _vis_viva(r2, a_t, m))
    time = np.pi * np.sqrt(a_t**3 / m)
    return HohmannTransfer(
        first_burn=scalar_or_array(first),
        second_burn=scalar_or_array(second),
        total=scalar_or_array(first + second),
        transfer_time=scalar_or_array(np.asarray(time, dtype=np.float64)),
    )


def plane_change_delta_v(speed: ArrayLike, angle: ArrayLike) -> ArrayLike:
    r"""
    Burn that rotates a velocity vector by an angle without changing its magnitude.

    Parameters
    ----------
    speed : float or numpy.ndarray
        Orbital speed at the burn point, before and after [m/s]. Not negative.
    angle : float or numpy.ndarray
        Rotation of the velocity vector (plane-change angle) [rad]; the sign is ignored.

    Returns
    -------
    delta_v : float or numpy.ndarray
        Magnitude of the burn [m/s].

    Raises
    ------
    ValueError
        If ``speed`` is negative or an input is not finite.

    Notes
    -----
    .. math:: \Delta v = 2 v \sin\frac{|\theta|}{2}

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
       Butterworth-Heinemann, 2013, chapter 6 (plane change maneuvers).
    .. [2] D. A. Vallado, Fundamentals of Astrodynamics and Applications, 4th ed.,
       Microcosm Press, 2013, chapter 6 (Orbital maneuvering), non-coplanar transfers.
    """
    v = as_non_negative("speed", speed)
    theta = as_finite("angle", angle)
    return scalar_or_array(2.0 * v * np.abs(np.sin(0.5 * theta)))


def vertical_speed_for_apogee(
    radius_start: ArrayLike, radius_apogee: ArrayLike, mu: ArrayLike = EARTH_MU
) -> ArrayLike:
    r"""
    Burnout speed of a drag-free vertical climb that coasts up to a given apogee radius.

    Gravity follows the inverse-square law; the atmosphere and Earth's rotation are ignored.

    Parameters
    ----------
    radius_start : float or numpy.ndarray
        Distance from the centre of the body at burnout [m]. Must be positive.
    radius_apogee : float or numpy.ndarray
        Distance from the centre of the body at apogee [m]. Not smaller than
        ``radius_start``.
    mu : float or numpy.ndarray, default EARTH_MU
        Gravitational parameter of the central body [m^3/s^2].

    Returns
    -------
    speed : float or numpy.ndarray
        Vertical burnout speed [m/s].

    Raises
    ------
    ValueError
        If a radius or ``mu`` is not positive, or ``radius_apogee < radius_start``.

    Notes
    -----
    Conservation of specific mechanical energy between burnout and apogee:

    .. math:: \frac{v^2}{2} - \frac{\mu}{r_0} = -\frac{\mu}{r_a}
              \quad\Rightarrow\quad v = \sqrt{2\mu\left(\frac{1}{r_0} - \frac{1}{r_a}\right)}

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
       Butterworth-Heinemann, 2013, chapter 2 (energy law).
    """
    r0 = as_positive("radius_start", radius_start)
    ra = as_positive("radius_apogee", radius_apogee)
    m = as_positive("mu", mu)
    if np.any(ra < r0):
        raise ValueError(
            f"radius_apogee ({radius_apogee!r} m) must not be below radius_start "
            f"({radius_start!r} m)"
        )
    return scalar_or_array(np.sqrt(2.0 * m * (1.0 / r0 - 1.0 / ra)))


def vertical_speed_for_apogee_uniform(
    height: ArrayLike, gravity: ArrayLike = STANDARD_GRAVITY
) -> ArrayLike:
    r"""
    Burnout speed of a drag-free vertical climb in uniform gravity that coasts up by a height.

    Parameters
    ----------
    height : float or numpy.ndarray
        Height gained between burnout and apogee [m]. Not negative.
    gravity : float or numpy.ndarray, default STANDARD_GRAVITY
        Constant gravitational acceleration [m/s^2]. Must be positive.

    Returns
    -------
    speed : float or numpy.ndarray
        Vertical burnout speed [m/s].

    Raises
    ------
    ValueError
        If ``height`` is negative or ``gravity`` is not positive.

    Notes
    -----
    .. math:: v = \sqrt{2 g h}

    References
    ----------
    .. [1] G. P. Sutton and O. Biblarz, Rocket Propulsion Elements, 9th ed., Wiley, 2017,
       chapter 4 (vertical flight in a uniform gravity field).
    """
    h = as_non_negative("height", height)
    g = as_positive("gravity", gravity)
    return scalar_or_array(np.sqrt(2.0 * g * h))


def earth_rotation_speed(
    latitude: ArrayLike,
    azimuth: ArrayLike,
    radius: ArrayLike = EARTH_EQUATORIAL_RADIUS,
    rate: ArrayLike = EARTH_ROTATION_RATE,
) -> ArrayLike:
    r"""
    Component of the launch site's rotational surface speed along the launch azimuth.

    Parameters
    ----------
    latitude : float or numpy.ndarray
        Latitude of the launch site [rad].
    azimuth : float or numpy.ndarray
        Launch azimuth measured clockwise from north [rad]; :math:`\pi/2` is due east.
    radius : float or numpy.ndarray, default EARTH_EQUATORIAL_RADIUS
        Distance from the rotation axis at the equator [m] (spherical Earth). Must be
        positive.
    rate : float or numpy.ndarray, default EARTH_ROTATION_RATE
        Rotation rate of the body [rad/s].

    Returns
    -------
    speed : float or numpy.ndarray
        Speed the rotation contributes along the azimuth [m/s]; negative for westward
        (retrograde) launches.

    Raises
    ------
    ValueError
        If an input is not finite or ``radius`` is not positive.

    Notes
    -----
    The surface moves due east at :math:`\omega R \cos\phi`; its component along the azimuth
    :math:`\beta` is

    .. math:: v_{rot} = \omega R \cos\phi \sin\beta

    References
    ----------
    .. [1] G. P. Sutton and O. Biblarz, Rocket Propulsion Elements, 9th ed., Wiley, 2017,
       chapter 4 (flight performance), effect of the Earth's rotation.
    .. [2] NIMA TR8350.2, Department of Defense World Geodetic System 1984, 3rd ed., 2000
       (values of R and omega).
    """
    phi = as_finite("latitude", latitude)
    beta = as_finite("azimuth", azimuth)
    r = as_positive("radius", radius)
    w = as_finite("rate", rate)
    return scalar_or_array(w * r * np.cos(phi) * np.sin(beta))
