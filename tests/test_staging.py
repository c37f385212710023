"""Tests of optimal staging against a textbook worked example, closed forms, brute-force search
and an independent direct optimiser."""

import math
from collections.abc import Callable

import numpy as np
import numpy.typing as npt
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import propulsion.staging as staging
from propulsion.rocket_equation import ideal_delta_v, stack_delta_v
from propulsion.staging import (
    StageValues,
    StagingSolution,
    compare_stage_counts,
    direct_staging,
    optimal_staging,
)

G0 = 9.80665  # 3rd CGPM (1901), exact; the project's g0.

Solver = Callable[[float, StageValues, StageValues, float], StagingSolution]

# Hypothesis settings for the random cases: few examples, each solves one or two optimisations.
RANDOM = settings(max_examples=30, deadline=None)

# The direct optimiser stops when ln(liftoff mass) no longer changes in double precision. At a
# minimum the objective moves by O(d^2) for a split error d, so the split is only located to
# about sqrt(machine epsilon) of the total: per-stage delta-v are compared at 1e-6 relative with
# an absolute floor of 1e-7 of the total delta-v (for stages that get next to nothing). This is
# a property of minimising a function value in floating point (common practice, no source);
# 6000 random cases of the same ranges, run while writing this test, needed at most a third
# of that tolerance.
DV_SPLIT_FLOOR = 1e-7


def reference_liftoff_ratio(
    split: npt.NDArray[np.float64], isp: npt.NDArray[np.float64], eps: npt.NDArray[np.float64]
) -> npt.NDArray[np.float64]:
    """m0 / m_PL of a stack for a given delta-v split (last axis = stages), NaN if impossible.

    Written out here from the rocket equation so that the brute-force search does not share
    code with the module: each stage has mass ratio n = exp(dv/c), and its stage mass is
    (n - 1)/(1 - n eps) times everything above it, so the stack grows by
    n (1 - eps)/(1 - n eps) per stage (H. D. Curtis, Orbital Mechanics for Engineering
    Students, 3rd ed., 2013, section 11.6).
    """
    n = np.exp(split / (isp * G0))
    denominator = 1.0 - n * eps
    growth = np.where(denominator > 0.0, n * (1.0 - eps) / denominator, np.nan)
    return np.asarray(np.prod(growth, axis=-1), dtype=np.float64)


@st.composite
def feasible_stacks(draw: st.DrawFn, max_stages: int = 3) -> tuple[float, list[float], list[float]]:
    """A delta-v between 10 % and 90 % of the reach of 2..max_stages random stages."""
    count = draw(st.integers(min_value=2, max_value=max_stages))
    isp = [draw(st.floats(min_value=200.0, max_value=450.0)) for _ in range(count)]
    eps = [draw(st.floats(min_value=0.05, max_value=0.25)) for _ in range(count)]
    limit = sum(i * G0 * math.log(1.0 / e) for i, e in zip(isp, eps, strict=True))
    share = draw(st.floats(min_value=0.1, max_value=0.9))
    return share * limit, isp, eps


def assert_same_optimum(a: StagingSolution, b: StagingSolution, total: float) -> None:
    assert a.feasible and b.feasible
    assert a.converged, a.message
    assert b.converged, b.message
    assert b.liftoff_mass == pytest.approx(a.liftoff_mass, rel=1e-6)
    assert b.delta_v == pytest.approx(a.delta_v, rel=1e-6, abs=DV_SPLIT_FLOOR * total)


# --- 1. identical stages ---------------------------------------------------------------------


@pytest.mark.parametrize("count", [2, 3, 4])
def test_identical_stages_split_delta_v_evenly(count: int) -> None:
    # Curtis, Orbital Mechanics for Engineering Students, 3rd ed., section 11.6: with the same
    # Isp and structural ratio, n_i = (c eta - 1)/(c eps eta) is the same for every stage, so
    # the optimum has equal mass ratios n = exp(dv/(N c)) and equal delta-v per stage.
    dv, isp, eps, payload = 9000.0, 310.0, 0.12, 750.0
    sol = optimal_staging(dv, [isp] * count, [eps] * count, payload)
    n = math.exp(dv / (count * isp * G0))
    assert sol.feasible and sol.converged
    assert sol.delta_v == pytest.approx(np.full(count, dv / count), rel=1e-12)
    assert sol.mass_ratio == pytest.approx(np.full(count, n), rel=1e-12)
    # Closed form of the same section: m0/m_PL = [n (1 - eps)/(1 - n eps)]^N.
    expected = payload * (n * (1.0 - eps) / (1.0 - n * eps)) ** count
    assert sol.liftoff_mass == pytest.approx(expected, rel=1e-12)


def test_identical_stages_direct_optimiser_also_splits_evenly() -> None:
    # Same closed form as above, reached without the multiplier.
    sol = direct_staging(7500.0, [280.0] * 3, [0.1] * 3, 100.0)
    assert sol.converged, sol.message
    assert sol.delta_v == pytest.approx(np.full(3, 2500.0), rel=1e-6)


# --- 2. Lagrange against direct optimisation -------------------------------------------------


@pytest.mark.parametrize(
    ("delta_v", "isp", "eps"),
    [
        (6000.0, [290.0, 340.0], [0.09, 0.14]),
        (8500.0, [260.0, 450.0], [0.06, 0.18]),
        (9500.0, [300.0, 330.0, 360.0], [0.08, 0.12, 0.2]),
        (11000.0, [430.0, 310.0, 270.0], [0.15, 0.07, 0.1]),
    ],
)
def test_lagrange_agrees_with_direct_optimisation(
    delta_v: float, isp: list[float], eps: list[float]
) -> None:
    # Independent check: two different algorithms for the same problem.
    lagrange = optimal_staging(delta_v, isp, eps, 1200.0)
    direct = direct_staging(delta_v, isp, eps, 1200.0)
    assert direct.liftoff_mass == pytest.approx(lagrange.liftoff_mass, rel=1e-6)
    # Every stage carries a large share here, so 1e-6 relative holds without a floor.
    assert direct.delta_v == pytest.approx(lagrange.delta_v, rel=1e-6)
    assert lagrange.converged and direct.converged
    assert math.isnan(direct.multiplier)


@RANDOM
@given(feasible_stacks(), st.floats(min_value=1.0, max_value=1.0e5))
def test_lagrange_agrees_with_direct_optimisation_random(
    case: tuple[float, list[float], list[float]], payload: float
) -> None:
    delta_v, isp, eps = case
    assert_same_optimum(
        optimal_staging(delta_v, isp, eps, payload),
        direct_staging(delta_v, isp, eps, payload),
        delta_v,
    )


@RANDOM
@given(feasible_stacks())
def test_direct_optimum_satisfies_the_multiplier_condition(
    case: tuple[float, list[float], list[float]],
) -> None:
    # Stationarity (Curtis 3rd ed., section 11.6): at the optimum every working stage has
    # 1/(c_i (1 - n_i eps_i)) equal to the same eta. Checked on the direct optimiser's answer,
    # which never computes eta.
    delta_v, isp, eps = case
    lagrange = optimal_staging(delta_v, isp, eps, 1.0)
    direct = direct_staging(delta_v, isp, eps, 1.0)
    c = np.asarray(isp) * G0
    working = lagrange.delta_v > 0.0
    implied = 1.0 / (c * (1.0 - direct.mass_ratio * np.asarray(eps)))
    assert implied[working] == pytest.approx(np.full(working.sum(), lagrange.multiplier), rel=1e-6)


def test_matches_brute_force_grid_two_stages() -> None:
    # Independent check: the liftoff mass of every split on a 1 m/s grid, computed from the
    # rocket equation alone (no optimiser). The minimum must lie at the optimiser's split.
    dv, isp, eps = 8000.0, np.array([270.0, 420.0]), np.array([0.07, 0.16])
    sol = optimal_staging(dv, isp, eps, 1.0)
    first = np.arange(0.0, dv + 0.5, 1.0)
    grid = reference_liftoff_ratio(np.stack([first, dv - first], axis=-1), isp, eps)
    best = int(np.nanargmin(grid))
    assert sol.delta_v[0] == pytest.approx(first[best], abs=1.0)  # grid step 1 m/s
    assert sol.liftoff_mass <= grid[best] * (1.0 + 1e-12)
    # The grid minimum is within a quadratic (tiny) step of the true optimum.
    assert sol.liftoff_mass == pytest.approx(grid[best], rel=1e-6)


def test_matches_brute_force_grid_three_stages() -> None:
    dv, isp, eps = 9000.0, np.array([280.0, 320.0, 400.0]), np.array([0.08, 0.11, 0.18])
    sol = optimal_staging(dv, isp, eps, 1.0)
    step = 5.0
    a, b = np.meshgrid(np.arange(0.0, dv + step / 2, step), np.arange(0.0, dv + step / 2, step))
    rest = dv - a - b
    split = np.stack([a, b, np.where(rest >= 0.0, rest, np.nan)], axis=-1)
    grid = reference_liftoff_ratio(split, isp, eps)
    i, j = np.unravel_index(np.nanargmin(grid), grid.shape)
    assert sol.delta_v[0] == pytest.approx(a[i, j], abs=step)
    assert sol.delta_v[1] == pytest.approx(b[i, j], abs=step)
    assert sol.liftoff_mass <= grid[i, j] * (1.0 + 1e-12)


def test_small_delta_v_leaves_the_weak_stage_idle() -> None:
    # With unlike stages and a small delta-v the classical formula would give the weak stage a
    # mass ratio below 1. The Kuhn-Tucker bound n >= 1 leaves it idle instead, and the answer
    # is then the single-stage closed form of the strong stage, n = exp(dv/c) (Tsiolkovsky).
    dv, payload = 500.0, 40.0
    isp, eps = [250.0, 450.0], [0.2, 0.08]
    sol = optimal_staging(dv, isp, eps, payload)
    n = math.exp(dv / (450.0 * G0))
    assert sol.delta_v[0] == 0.0
    assert sol.stage_mass[0] == 0.0
    assert sol.delta_v[1] == pytest.approx(dv, rel=1e-12)
    assert sol.liftoff_mass == pytest.approx(payload * n * 0.92 / (1.0 - n * 0.08), rel=1e-12)
    assert "stage 1 carries" in sol.message
    # The brute-force grid agrees that the first stage should get nothing.
    first = np.arange(0.0, dv + 0.05, 0.1)
    split = np.stack([first, dv - first], axis=-1)
    grid = reference_liftoff_ratio(split, np.array(isp), np.array(eps))
    assert first[int(np.nanargmin(grid))] == 0.0
    # And so does the direct optimiser, which only knows the bound dv_i >= 0.
    assert_same_optimum(sol, direct_staging(dv, isp, eps, payload), dv)


def test_direct_optimiser_reports_failure_honestly(monkeypatch: pytest.MonkeyPatch) -> None:
    # Starve SLSQP of iterations: the result must say it did not converge.
    real_minimize = staging.minimize

    def one_iteration(*args: object, **kwargs: object) -> object:
        kwargs["options"] = {"maxiter": 1}
        return real_minimize(*args, **kwargs)

    monkeypatch.setattr(staging, "minimize", one_iteration)
    sol = direct_staging(9500.0, [300.0, 330.0, 360.0], [0.08, 0.12, 0.2], 1.0)
    assert sol.feasible
    assert not sol.converged
    assert "Iteration limit" in sol.message


# --- 3. textbook worked example --------------------------------------------------------------

# H. D. Curtis, Orbital Mechanics for Engineering Students, section 11.6 (Optimal staging),
# worked example "Find the optimal mass for a three-stage launch vehicle which is required to
# lift a 5000 kg payload to a speed of 10 km/s" (Example 11.5 in the transcription of the
# printed solution consulted; the example number may differ between editions, and the
# edition of that transcription was not verified). Curtis works with g0 = 9.81 m/s^2: he
# prints c1 = 3.924 km/s for Isp 400 s. The specific impulses below are scaled so that the
# exhaust velocities are the book's.
CURTIS_G0 = 9.81
CURTIS_ISP = np.array([400.0, 350.0, 300.0]) * CURTIS_G0 / G0
CURTIS_EPS = np.array([0.10, 0.15, 0.20])
CURTIS_PAYLOAD = 5000.0  # kg
CURTIS_DELTA_V = 10_000.0  # m/s


def test_curtis_three_stage_example() -> None:
    sol = optimal_staging(CURTIS_DELTA_V, CURTIS_ISP, CURTIS_EPS, CURTIS_PAYLOAD)
    assert sol.feasible and sol.converged
    # Printed values; tolerance half a unit in the last printed digit.
    # eta = 0.4668 (printed in s/km).
    assert sol.multiplier * 1000.0 == pytest.approx(0.4668, abs=0.00005)
    # n1 = 4.541, n2 = 2.507, n3 = 1.361.
    assert sol.mass_ratio == pytest.approx([4.541, 2.507, 1.361], abs=0.0005)
    # m1 = 165 700 kg, m2 = 18 070 kg, m3 = 2477 kg (step masses).
    assert sol.stage_mass[0] == pytest.approx(165_700.0, abs=50.0)
    assert sol.stage_mass[1] == pytest.approx(18_070.0, abs=5.0)
    assert sol.stage_mass[2] == pytest.approx(2477.0, abs=0.5)
    # m0 = m1 + m2 + m3 + m_PL = 191 200 kg.
    assert sol.liftoff_mass == pytest.approx(191_200.0, abs=50.0)
    # Payload ratios lambda1 = 0.1542, lambda2 = 0.4139, lambda3 = 2.018 (mass above a stage
    # over the stage mass).
    above = np.append(sol.initial_mass[1:], CURTIS_PAYLOAD)
    payload_ratio = above / sol.stage_mass
    assert payload_ratio[0] == pytest.approx(0.1542, abs=0.00005)
    assert payload_ratio[1] == pytest.approx(0.4139, abs=0.00005)
    assert payload_ratio[2] == pytest.approx(2.018, abs=0.0005)
    # Same example: empty mass m_E = eps m and propellant m_p = m - m_E of the printed step
    # masses.
    printed = np.array([165_700.0, 18_070.0, 2477.0])
    half_unit = np.array([50.0, 5.0, 0.5])
    for i in range(3):
        eps = CURTIS_EPS[i]
        assert sol.inert_mass[i] == pytest.approx(eps * printed[i], abs=eps * half_unit[i])
        assert sol.propellant_mass[i] == pytest.approx(
            (1.0 - eps) * printed[i], abs=(1.0 - eps) * half_unit[i]
        )


def test_curtis_example_direct_optimiser() -> None:
    # The direct optimiser reproduces the same printed figures (same source as above).
    sol = direct_staging(CURTIS_DELTA_V, CURTIS_ISP, CURTIS_EPS, CURTIS_PAYLOAD)
    assert sol.converged, sol.message
    assert sol.mass_ratio == pytest.approx([4.541, 2.507, 1.361], abs=0.0005)
    assert sol.liftoff_mass == pytest.approx(191_200.0, abs=50.0)


# --- 4. single stage -------------------------------------------------------------------------


@pytest.mark.parametrize("solver", [optimal_staging, direct_staging])
@pytest.mark.parametrize(("delta_v", "isp", "eps"), [(1500.0, 220.0, 0.2), (5000.0, 330.0, 0.08)])
def test_single_stage_is_tsiolkovsky(
    solver: Solver, delta_v: float, isp: float, eps: float
) -> None:
    # Closed form (Tsiolkovsky): n = exp(dv/c); with m_E = eps (m_E + m_p) the stage mass that
    # gives it is m_PL (n - 1)/(1 - n eps).
    sol = solver(delta_v, [isp], [eps], 25.0)
    n = math.exp(delta_v / (isp * G0))
    assert sol.mass_ratio[0] == pytest.approx(n, rel=1e-12)
    assert sol.stage_mass[0] == pytest.approx(25.0 * (n - 1.0) / (1.0 - n * eps), rel=1e-12)
    assert sol.delta_v[0] == pytest.approx(delta_v, rel=1e-12)
    # The rocket equation module, fed the masses, gives back the delta-v.
    m0 = sol.liftoff_mass
    assert ideal_delta_v(isp, m0, m0 - sol.propellant_mass[0]) == pytest.approx(delta_v, rel=1e-12)


@RANDOM
@given(feasible_stacks(max_stages=4), st.sampled_from([optimal_staging, direct_staging]))
def test_stack_masses_fly_the_requested_delta_v(
    case: tuple[float, list[float], list[float]], solver: Solver
) -> None:
    # Closed form (Tsiolkovsky, per stage): the masses returned, burnt stage by stage with the
    # rocket equation module, give each stage's delta-v and the requested total.
    delta_v, isp, eps = case
    sol = solver(delta_v, isp, eps, 300.0)
    work = sol.stage_mass > 0.0  # idle stages have no burn to check
    if np.all(work):
        per_stage, total = stack_delta_v(
            np.asarray(isp), sol.initial_mass, sol.initial_mass - sol.propellant_mass
        )
        assert per_stage == pytest.approx(sol.delta_v, rel=1e-9, abs=1e-9 * delta_v)
        assert total == pytest.approx(delta_v, rel=1e-9)
    assert float(np.sum(sol.delta_v)) == pytest.approx(delta_v, rel=1e-9)
    assert sol.inert_mass == pytest.approx(np.asarray(eps) * sol.stage_mass, rel=1e-12)
    assert sol.liftoff_mass == pytest.approx(300.0 + float(np.sum(sol.stage_mass)), rel=1e-12)
    assert sol.payload_fraction == pytest.approx(300.0 / sol.liftoff_mass, rel=1e-12)


def test_zero_delta_v_needs_no_stages() -> None:
    for solver in (optimal_staging, direct_staging):
        sol = solver(0.0, [300.0, 350.0], [0.1, 0.1], 12.0)
        assert sol.liftoff_mass == 12.0
        assert sol.payload_fraction == 1.0
        assert np.all(sol.stage_mass == 0.0)
        assert np.all(sol.mass_ratio == 1.0)


# --- 5. infeasible delta-v -------------------------------------------------------------------


@pytest.mark.parametrize("excess", [0.0, 1.0, 5000.0])
def test_infeasible_delta_v_is_reported_not_raised(excess: float) -> None:
    # Closed form: a stage's mass ratio stays below 1/eps for any finite mass, so the stack
    # can never reach sum c_i ln(1/eps_i).
    isp, eps = [300.0, 340.0], [0.1, 0.12]
    limit = sum(i * G0 * math.log(1.0 / e) for i, e in zip(isp, eps, strict=True))
    for solver in (optimal_staging, direct_staging):
        sol = solver(limit + excess, isp, eps, 100.0)
        assert not sol.feasible
        assert not sol.converged
        assert "out of reach" in sol.reason
        assert math.isnan(sol.liftoff_mass)
        assert math.isnan(sol.payload_fraction)
        assert np.all(np.isnan(sol.stage_mass))
        assert sol.stage_count == 2


def test_just_inside_the_limit_is_feasible_but_enormous() -> None:
    isp, eps = [300.0, 340.0], [0.1, 0.12]
    limit = sum(i * G0 * math.log(1.0 / e) for i, e in zip(isp, eps, strict=True))
    sol = optimal_staging(limit - 1.0, isp, eps, 1.0)
    assert sol.feasible and sol.converged
    assert float(np.sum(sol.delta_v)) == pytest.approx(limit - 1.0, rel=1e-12)
    assert sol.liftoff_mass > 1e6
    # Each mass ratio sits just under its ceiling 1/eps.
    assert np.all(sol.mass_ratio < 1.0 / np.asarray(eps))
    assert sol.mass_ratio == pytest.approx(1.0 / np.asarray(eps), rel=1e-3)


# --- 6. properties ---------------------------------------------------------------------------


@RANDOM
@given(feasible_stacks(), st.floats(min_value=0.0, max_value=1.0))
def test_more_delta_v_never_lowers_liftoff_mass(
    case: tuple[float, list[float], list[float]], shrink: float
) -> None:
    # Property: a stack that reaches dv also reaches any smaller dv (burn less), so the
    # minimum liftoff mass cannot fall as dv grows.
    delta_v, isp, eps = case
    high = optimal_staging(delta_v, isp, eps, 50.0)
    low = optimal_staging(shrink * delta_v, isp, eps, 50.0)
    assert low.liftoff_mass <= high.liftoff_mass


def test_multiplier_is_the_sensitivity_of_liftoff_mass() -> None:
    # Property of a Lagrange multiplier (S. Boyd and L. Vandenberghe, Convex Optimization,
    # 2004, chapter 5, sensitivity interpretation): eta = d ln(m0) / d(delta-v).
    # Checked with a central difference, which does not use eta.
    isp, eps, dv, h = [290.0, 340.0, 420.0], [0.09, 0.13, 0.17], 9000.0, 1.0
    mid = optimal_staging(dv, isp, eps, 1.0)
    up = optimal_staging(dv + h, isp, eps, 1.0).liftoff_mass
    down = optimal_staging(dv - h, isp, eps, 1.0).liftoff_mass
    assert (math.log(up) - math.log(down)) / (2 * h) == pytest.approx(mid.multiplier, rel=1e-6)


def test_third_stage_helps_at_large_delta_v() -> None:
    # 9 km/s, Isp 300 s, eps 0.1, identical stages. One stage cannot do it: its reach is
    # c ln(1/eps) = 6.77 km/s (closed form). Three stages need less liftoff mass than two.
    one, two, three = compare_stage_counts(9000.0, 300.0, 0.1, 1000.0)
    assert not one.feasible
    assert two.feasible and three.feasible
    assert three.liftoff_mass < two.liftoff_mass
    assert [s.stage_count for s in (one, two, three)] == [1, 2, 3]
    # Each entry is the closed form for N identical stages (Curtis 3rd ed., section 11.6).
    for sol, count in ((two, 2), (three, 3)):
        n = math.exp(9000.0 / (count * 300.0 * G0))
        expected = 1000.0 * (n * 0.9 / (1.0 - n * 0.1)) ** count
        assert sol.liftoff_mass == pytest.approx(expected, rel=1e-12)


@RANDOM
@given(
    st.floats(min_value=500.0, max_value=12_000.0),
    st.floats(min_value=200.0, max_value=450.0),
    st.floats(min_value=0.05, max_value=0.25),
)
def test_adding_an_identical_stage_never_increases_liftoff_mass(
    delta_v: float, isp: float, eps: float
) -> None:
    # Property: N stages plus an empty (N+1)th stage is a valid (N+1)-stage design with the
    # same liftoff mass, so the (N+1)-stage optimum can only be lighter.
    two, three = compare_stage_counts(delta_v, isp, eps, 1.0, counts=(2, 3))
    if two.feasible:
        assert three.feasible
        assert three.liftoff_mass <= two.liftoff_mass * (1.0 + 1e-12)


# --- input guards ----------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("delta_v", "isp", "eps", "payload"),
    [
        (-1.0, [300.0], [0.1], 1.0),
        (float("nan"), [300.0], [0.1], 1.0),
        (1000.0, [0.0], [0.1], 1.0),
        (1000.0, [300.0], [0.0], 1.0),
        (1000.0, [300.0], [1.0], 1.0),
        (1000.0, [300.0, 310.0], [0.1, 0.1, 0.1], 1.0),
        (1000.0, [300.0], [0.1], 0.0),
        (1000.0, [], [], 1.0),
    ],
)
def test_impossible_inputs_raise(
    delta_v: float, isp: list[float], eps: list[float], payload: float
) -> None:
    for solver in (optimal_staging, direct_staging):
        with pytest.raises(ValueError):
            solver(delta_v, isp, eps, payload)


def test_bad_stage_count_raises() -> None:
    with pytest.raises(ValueError):
        compare_stage_counts(5000.0, 300.0, 0.1, 1.0, counts=(2, 0))


def test_scalar_stage_value_applies_to_every_stage() -> None:
    a = optimal_staging(7000.0, 300.0, [0.08, 0.12], 1.0)
    b = optimal_staging(7000.0, [300.0, 300.0], [0.08, 0.12], 1.0)
    assert a.liftoff_mass == b.liftoff_mass
    with pytest.raises(ValueError):
        a.stage_mass[0] = 0.0  # the result arrays are read-only
