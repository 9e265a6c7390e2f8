"""The first-article fit's statistics against the straight-line least-squares fit in closed form.

Source: P. R. Bevington, D. K. Robinson, "Data Reduction and Error Analysis for the Physical Sciences", 3rd ed.,
McGraw-Hill 2003, ch. 6 (least-squares fit to a straight line y = a + b x with a common uncertainty sigma):

    Delta = N sum x^2 - (sum x)^2
    a = (sum x^2 sum y - sum x sum xy) / Delta,       sigma_a^2 = sigma^2 sum x^2 / Delta
    b = (N sum xy - sum x sum y) / Delta,             sigma_b^2 = N sigma^2 / Delta

and ch. 11 for the reduced chi-square chi2 / (N - 2) by which the covariance is scaled when the uncertainties
are estimated from the scatter (equation numbers not quoted: from memory). The scaled case is also checked
against scipy.optimize.curve_fit with absolute_sigma=False, an independent implementation of the same rule.

`deflect.decisions.first_article.fit_unknowns` is run on a model of the readings that is exactly this line (its
two unknowns as "size" unknowns, whose finite-difference Jacobian is exact for a line), so the fit, the
covariance through the Jacobian's singular values, the quantile rule and the identification rules are checked
apart from the machining simulation.
"""

import numpy as np
import pytest
from scipy import stats
from scipy.optimize import curve_fit

from deflect.decisions.first_article import ReadingModel, Unknown, fit_unknowns

X = np.linspace(0.0, 1.0, 9)
SIGMA = 0.002
TRUE_A, TRUE_B = 0.01, 0.05
SAME = 1e-9                  # the line is fitted exactly; only float rounding and the solver's tolerance remain
Z95 = stats.norm.ppf(0.975)


class Readings:
    """A model of the readings given as a function of the unknowns (mass 0), with the package's Jacobian."""

    jacobian = ReadingModel.jacobian

    def __init__(self, unknowns, values_of):
        self.unknowns, self.values_of = unknowns, values_of

    def __call__(self, x):
        return self.values_of(x), 0.0


def Line(unknowns, columns=()):
    """y_i = a + b x_i, plus (f - 1) c_i for each factor f whose column c is given."""
    return Readings(unknowns, lambda x: x[0] + x[1] * X + sum((x[2 + k] - 1.0) * c for k, c in enumerate(columns)))


def closed_form(y):
    n, sx, sxx, sy, sxy = len(X), X.sum(), (X * X).sum(), y.sum(), (X * y).sum()
    delta = n * sxx - sx**2
    a = (sxx * sy - sx * sxy) / delta
    b = (n * sxy - sx * sy) / delta
    return a, b, np.sqrt(SIGMA**2 * sxx / delta), np.sqrt(n * SIGMA**2 / delta)


LINE = [Unknown("size", "a", "od"), Unknown("size", "b", "od")]


def fit(model, y):
    return fit_unknowns(model, y, np.full(len(X), SIGMA), np.ones(len(X), bool))


def test_straight_line_with_the_stated_uncertainty():
    y = TRUE_A + TRUE_B * X + SIGMA * np.array([0.3, -0.8, 0.5, 1.1, -0.2, -0.9, 0.4, 0.0, -0.6])
    result = fit(Line(LINE), y)
    a, b, sigma_a, sigma_b = closed_form(y)
    assert result.x[:2] == pytest.approx([a, b], abs=SAME)
    assert not result.scaled and result.quantile == pytest.approx(Z95)
    assert np.sqrt(np.diag(result.covariance)) == pytest.approx([sigma_a, sigma_b], rel=1e-6)
    assert result.degrees_of_freedom == len(X) - 2
    residual = (y - a - b * X) / SIGMA
    assert result.chi_square == pytest.approx(residual @ residual, rel=1e-6)


def test_scatter_beyond_the_stated_uncertainty_scales_the_covariance_and_uses_t():
    y = TRUE_A + TRUE_B * X + SIGMA * np.array([3.0, -4.0, 2.5, 5.0, -3.5, -4.5, 2.0, 4.0, -3.0])
    result = fit(Line(LINE), y)
    a, b, sigma_a, sigma_b = closed_form(y)
    residual = (y - a - b * X) / SIGMA
    chi_square, dof = residual @ residual, len(X) - 2
    assert chi_square > stats.chi2.ppf(0.95, dof)           # the case the rule scales
    assert result.scaled and result.quantile == pytest.approx(stats.t.ppf(0.975, dof))
    reduced = chi_square / dof
    assert np.sqrt(np.diag(result.covariance)) == pytest.approx(np.sqrt(reduced) * np.array([sigma_a, sigma_b]),
                                                                rel=1e-6)
    _, covariance = curve_fit(lambda x, a, b: a + b * x, X, y, sigma=np.full(len(X), SIGMA), absolute_sigma=False)
    assert np.diag(result.covariance)[:2] == pytest.approx(np.diag(covariance), rel=1e-6)


def test_an_unknown_nothing_sees_is_not_identified_and_left_at_its_start():
    # a factor whose doubling moves the readings by 0.1 sigma in all: not seen, never fitted to the scatter
    faint = np.full(len(X), 0.1 * SIGMA / np.sqrt(len(X)))
    model = Line(LINE + [Unknown("force", "T9")], [faint])
    y = TRUE_A + TRUE_B * X + SIGMA * np.array([0.3, -0.8, 0.5, 1.1, -0.2, -0.9, 0.4, 0.0, -0.6])
    result = fit(model, y)
    assert result.identified == [True, True, False] and result.x[2] == 1.0
    assert "nothing measured sees it" in result.reasons[2]
    assert result.x[:2] == pytest.approx(closed_form(y)[:2], abs=SAME)


def test_two_unknowns_with_one_column_cannot_be_separated():
    # a factor that moves every reading alike, as the intercept does: the readings see only their sum
    model = Line(LINE + [Unknown("force", "T9")], [np.full(len(X), 10 * SIGMA)])
    result = fit(model, TRUE_A + TRUE_B * X)
    assert result.identified == [False, True, False]
    assert "cannot be separated" in result.reasons[0] and "T9" in result.reasons[0]
    assert result.unseparated and "cannot tell" in result.unseparated[0]


@pytest.mark.parametrize("amplitude, curvature, resolved", [(3.0, 0.1, False), (10.0, 1.0, True)])
def test_a_factor_seen_but_not_resolved_from_the_intercept(amplitude, curvature, resolved):
    # an intercept and a factor whose column c = A sigma (1 + k x^2) is nearly the intercept's: seen (its norm is
    # 3 sigma per reading and more) and separable (singular value ratio 0.016 for k = 0.1), but for A = 3,
    # k = 0.1 its 95 % interval at f = 1, 1.96 sqrt((J^T J)^-1)_ff with J = [1 / sigma, c / sigma], is +/-6.5:
    # not resolved from 0, set aside before the fit; for A = 10, k = 1 it is +/-0.19 and fitted
    column = amplitude * SIGMA * (1.0 + curvature * X**2)
    model = Readings([Unknown("size", "a", "od"), Unknown("force", "T9")], lambda x: x[0] + (x[1] - 1.0) * column)
    jacobian = np.column_stack([np.ones(len(X)), column]) / SIGMA
    half = Z95 * np.sqrt(np.linalg.inv(jacobian.T @ jacobian)[1, 1])
    assert (half < 1.0) == resolved
    y = TRUE_A + (0.8 - 1.0) * column
    result = fit(model, y)
    assert result.identified == [True, resolved]
    if resolved:
        assert result.x == pytest.approx([TRUE_A, 0.8], abs=1e-6)
        assert result.quantile * np.sqrt(result.covariance[1, 1]) == pytest.approx(half, rel=1e-6)
    else:
        assert result.x[1] == 1.0 and "reach 0" in result.reasons[1]
