"""Test problems for the NLP solver: Hock & Schittkowski and small analytic cases.

Hock & Schittkowski problems are from W. Hock, K. Schittkowski, "Test
Examples for Nonlinear Programming Codes", Springer 1981 (vol. 187 of its
series in economics and mathematical systems). Formulations, start points and
optimal values below are written FROM MEMORY of that collection (no copy
was at hand); the tests cross-check every one against IPOPT, and the
analytic cases against closed-form solutions derived in the docstrings.

Each problem is built fresh by :func:`build`, so the catalogue is cheap to
import.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

import casadi as ca
import numpy as np

inf = np.inf


@dataclass(frozen=True)
class Problem:
    """One catalogue entry.

    Attributes
    ----------
    name : str
        e.g. ``"hs071"``.
    kind : str
        ``"hs"``, ``"analytic"``, ``"degenerate"``, ``"nonconvex"``, ``"flowsheet"``
        or ``"infeasible"``.
    f_star : float or None
        Published (HS) or analytic optimal objective; None for infeasible
        ones and for those checked against IPOPT only.
    x_star : tuple or None
        Known minimiser where unique and known.
    source : str
        Where ``f_star`` comes from, with "from memory" where applicable.
    make : callable
        Returns ``(nlp, x0, lbx, ubx, lbg, ubg)``.
    lam_g_star : tuple or None
        Analytic constraint multipliers (casadi sign) where unique.
    lam_x_star : tuple or None
        Analytic bound multipliers where unique.
    unique_multipliers : bool
        Whether multipliers are unique (LICQ holds) so solvers must agree.
    f_rtol : float
        Relative tolerance implied by the printed digits of ``f_star``.
    x_atol : float
        Accuracy to which a KKT tolerance of 1e-8 determines ``x_star``:
        1e-6 at a nondegenerate minimiser; for minima of quartic or higher
        order (``f - f* ~ |x - x*|^4``) only about ``(1e-8)^(1/4) = 1e-2``.
    """

    name: str
    kind: str
    f_star: float | None
    source: str
    make: Callable[[], tuple]
    x_star: tuple | None = None
    lam_g_star: tuple | None = None
    lam_x_star: tuple | None = None
    unique_multipliers: bool = True
    f_rtol: float = 1e-6
    x_atol: float = 1e-6


def _x(n: int) -> ca.SX:
    return ca.SX.sym("x", n)


def _hs(num: int, f_star: float, x_star=None, f_rtol: float = 1e-6, note: str = "from memory",
        x_atol: float = 1e-6):
    def deco(fn):
        return Problem(f"hs{num:03d}", "hs", f_star, f"Hock & Schittkowski (1981) no. {num}, {note}",
                       fn, x_star=x_star, f_rtol=f_rtol, x_atol=x_atol)
    return deco


@_hs(6, 0.0, (1.0, 1.0))
def hs006():
    x = _x(2)
    return ({"x": x, "f": (1 - x[0]) ** 2, "g": 10 * (x[1] - x[0] ** 2)},
            [-1.2, 1.0], -inf, inf, [0.0], [0.0])


@_hs(7, -np.sqrt(3.0), (0.0, np.sqrt(3.0)))
def hs007():
    x = _x(2)
    return ({"x": x, "f": ca.log(1 + x[0] ** 2) - x[1],
             "g": (1 + x[0] ** 2) ** 2 + x[1] ** 2 - 4}, [2.0, 2.0], -inf, inf, [0.0], [0.0])


@_hs(10, -1.0, (0.0, 1.0))
def hs010():
    x = _x(2)
    return ({"x": x, "f": x[0] - x[1], "g": -3 * x[0] ** 2 + 2 * x[0] * x[1] - x[1] ** 2 + 1},
            [-10.0, 10.0], -inf, inf, [0.0], [inf])


@_hs(11, -8.498464223)
def hs011():
    x = _x(2)
    return ({"x": x, "f": (x[0] - 5) ** 2 + x[1] ** 2 - 25, "g": -x[0] ** 2 + x[1]},
            [4.9, 0.1], -inf, inf, [0.0], [inf])


@_hs(12, -30.0, (2.0, 3.0))
def hs012():
    x = _x(2)
    return ({"x": x, "f": 0.5 * x[0] ** 2 + x[1] ** 2 - x[0] * x[1] - 7 * x[0] - 7 * x[1],
             "g": 25 - 4 * x[0] ** 2 - x[1] ** 2}, [0.0, 0.0], -inf, inf, [0.0], [inf])


@_hs(14, 9 - 2.875 * np.sqrt(7), (0.5 * (np.sqrt(7) - 1), 0.25 * (np.sqrt(7) + 1)))
def hs014():
    x = _x(2)
    return ({"x": x, "f": (x[0] - 2) ** 2 + (x[1] - 1) ** 2,
             "g": ca.vertcat(x[0] - 2 * x[1] + 1, -x[0] ** 2 / 4 - x[1] ** 2 + 1)},
            [2.0, 2.0], -inf, inf, [0.0, 0.0], [0.0, inf])


@_hs(21, -99.96, (2.0, 0.0))
def hs021():
    x = _x(2)
    return ({"x": x, "f": 0.01 * x[0] ** 2 + x[1] ** 2 - 100, "g": 10 * x[0] - x[1] - 10},
            [-1.0, -1.0], [2.0, -50.0], [50.0, 50.0], [0.0], [inf])


@_hs(26, 0.0, (1.0, 1.0, 1.0), x_atol=1e-2)  # quartic minimum
def hs026():
    x = _x(3)
    return ({"x": x, "f": (x[0] - x[1]) ** 2 + (x[1] - x[2]) ** 4,
             "g": (1 + x[1] ** 2) * x[0] + x[2] ** 4 - 3}, [-2.6, 2.0, 2.0], -inf, inf, [0.0], [0.0])


@_hs(27, 0.04, (-1.0, 1.0, 0.0))
def hs027():
    x = _x(3)
    return ({"x": x, "f": 0.01 * (x[0] - 1) ** 2 + (x[1] - x[0] ** 2) ** 2,
             "g": x[0] + x[2] ** 2 + 1}, [2.0, 2.0, 2.0], -inf, inf, [0.0], [0.0])


@_hs(28, 0.0, (0.5, -0.5, 0.5))
def hs028():
    x = _x(3)
    return ({"x": x, "f": (x[0] + x[1]) ** 2 + (x[1] + x[2]) ** 2,
             "g": x[0] + 2 * x[1] + 3 * x[2] - 1}, [-4.0, 1.0, 1.0], -inf, inf, [0.0], [0.0])


@_hs(35, 1.0 / 9.0, (4.0 / 3.0, 7.0 / 9.0, 4.0 / 9.0))
def hs035():
    x = _x(3)
    f = (9 - 8 * x[0] - 6 * x[1] - 4 * x[2] + 2 * x[0] ** 2 + 2 * x[1] ** 2 + x[2] ** 2
         + 2 * x[0] * x[1] + 2 * x[0] * x[2])
    return ({"x": x, "f": f, "g": 3 - x[0] - x[1] - 2 * x[2]}, [0.5] * 3, 0.0, inf, [0.0], [inf])


@_hs(39, -1.0, (1.0, 1.0, 0.0, 0.0))
def hs039():
    x = _x(4)
    return ({"x": x, "f": -x[0], "g": ca.vertcat(x[1] - x[0] ** 3 - x[2] ** 2,
                                                  x[0] ** 2 - x[1] - x[3] ** 2)},
            [2.0] * 4, -inf, inf, [0.0, 0.0], [0.0, 0.0])


@_hs(40, -0.25, (2 ** (-1 / 3), 2 ** (-1 / 2), 2 ** (-11 / 12), 2 ** (-1 / 4)))
def hs040():
    x = _x(4)
    return ({"x": x, "f": -x[0] * x[1] * x[2] * x[3],
             "g": ca.vertcat(x[0] ** 3 + x[1] ** 2 - 1, x[0] ** 2 * x[3] - x[2], x[3] ** 2 - x[1])},
            [0.8] * 4, -inf, inf, [0.0] * 3, [0.0] * 3)


@_hs(42, 28 - 10 * np.sqrt(2), (2.0, 2.0, 0.6 * np.sqrt(2), 0.8 * np.sqrt(2)))
def hs042():
    x = _x(4)
    return ({"x": x, "f": (x[0] - 1) ** 2 + (x[1] - 2) ** 2 + (x[2] - 3) ** 2 + (x[3] - 4) ** 2,
             "g": ca.vertcat(x[0] - 2, x[2] ** 2 + x[3] ** 2 - 2)},
            [1.0] * 4, -inf, inf, [0.0, 0.0], [0.0, 0.0])


@_hs(46, 0.0, (1.0,) * 5, x_atol=1e-2)  # quartic and sixth-power terms
def hs046():
    x = _x(5)
    f = (x[0] - x[1]) ** 2 + (x[2] - 1) ** 2 + (x[3] - 1) ** 4 + (x[4] - 1) ** 6
    g = ca.vertcat(x[0] ** 2 * x[3] + ca.sin(x[3] - x[4]) - 1, x[1] + x[2] ** 4 * x[3] ** 2 - 2)
    return ({"x": x, "f": f, "g": g}, [0.5 * np.sqrt(2), 1.75, 0.5, 2.0, 2.0], -inf, inf,
            [0.0, 0.0], [0.0, 0.0])


@_hs(47, 0.0, (1.0,) * 5, x_atol=1e-2)  # cubic and quartic terms
def hs047():
    x = _x(5)
    f = (x[0] - x[1]) ** 2 + (x[1] - x[2]) ** 3 + (x[2] - x[3]) ** 4 + (x[3] - x[4]) ** 4
    g = ca.vertcat(x[0] + x[1] ** 2 + x[2] ** 3 - 3, x[1] - x[2] ** 2 + x[3] - 1, x[0] * x[4] - 1)
    return ({"x": x, "f": f, "g": g}, [2.0, np.sqrt(2), -1.0, 2 - np.sqrt(2), 0.5], -inf, inf,
            [0.0] * 3, [0.0] * 3)


@_hs(48, 0.0, (1.0,) * 5)
def hs048():
    x = _x(5)
    f = (x[0] - 1) ** 2 + (x[1] - x[2]) ** 2 + (x[3] - x[4]) ** 2
    g = ca.vertcat(ca.sum1(x) - 5, x[2] - 2 * (x[3] + x[4]) + 3)
    return ({"x": x, "f": f, "g": g}, [3.0, 5.0, -3.0, 2.0, -2.0], -inf, inf, [0.0, 0.0], [0.0, 0.0])


@_hs(51, 0.0, (1.0,) * 5)
def hs051():
    x = _x(5)
    f = (x[0] - x[1]) ** 2 + (x[1] + x[2] - 2) ** 2 + (x[3] - 1) ** 2 + (x[4] - 1) ** 2
    g = ca.vertcat(x[0] + 3 * x[1] - 4, x[2] + x[3] - 2 * x[4], x[1] - x[4])
    return ({"x": x, "f": f, "g": g}, [2.5, 0.5, 2.0, -1.0, 0.5], -inf, inf, [0.0] * 3, [0.0] * 3)


@_hs(65, 0.9535288567, (3.650461821, 3.650461821, 4.6204170507))
def hs065():
    x = _x(3)
    f = (x[0] - x[1]) ** 2 + (x[0] + x[1] - 10) ** 2 / 9 + (x[2] - 5) ** 2
    return ({"x": x, "f": f, "g": 48 - ca.sumsqr(x)}, [-5.0, 5.0, 0.0],
            [-4.5, -4.5, -5.0], [4.5, 4.5, 5.0], [0.0], [inf])


@_hs(71, 17.0140173, (1.0, 4.7429994, 3.8211503, 1.3794082))
def hs071():
    x = _x(4)
    f = x[0] * x[3] * (x[0] + x[1] + x[2]) + x[2]
    g = ca.vertcat(x[0] * x[1] * x[2] * x[3], ca.sumsqr(x))
    return ({"x": x, "f": f, "g": g}, [1.0, 5.0, 5.0, 1.0], 1.0, 5.0, [25.0, 40.0], [inf, 40.0])


@_hs(76, -4.681818181, (0.2727273, 2.090909, 0.0, 0.5454545))
def hs076():
    x = _x(4)
    f = (x[0] ** 2 + 0.5 * x[1] ** 2 + x[2] ** 2 + 0.5 * x[3] ** 2 - x[0] * x[2] + x[2] * x[3]
         - x[0] - 3 * x[1] + x[2] - x[3])
    g = ca.vertcat(5 - x[0] - 2 * x[1] - x[2] - x[3], 4 - 3 * x[0] - x[1] - 2 * x[2] + x[3],
                   x[1] + 4 * x[2] - 1.5)
    return ({"x": x, "f": f, "g": g}, [0.5] * 4, 0.0, inf, [0.0] * 3, [inf] * 3)


@_hs(77, 0.24150513)
def hs077():
    x = _x(5)
    f = (x[0] - 1) ** 2 + (x[0] - x[1]) ** 2 + (x[2] - 1) ** 2 + (x[3] - 1) ** 4 + (x[4] - 1) ** 6
    g = ca.vertcat(x[0] ** 2 * x[3] + ca.sin(x[3] - x[4]) - 2 * np.sqrt(2),
                   x[1] + x[2] ** 4 * x[3] ** 2 - 8 - np.sqrt(2))
    return ({"x": x, "f": f, "g": g}, [2.0] * 5, -inf, inf, [0.0, 0.0], [0.0, 0.0])


@_hs(78, -2.91970041)
def hs078():
    x = _x(5)
    f = x[0] * x[1] * x[2] * x[3] * x[4]
    g = ca.vertcat(ca.sumsqr(x) - 10, x[1] * x[2] - 5 * x[3] * x[4], x[0] ** 3 + x[1] ** 3 + 1)
    return ({"x": x, "f": f, "g": g}, [-2.0, 1.5, 2.0, -1.0, -1.0], -inf, inf, [0.0] * 3, [0.0] * 3)


@_hs(79, 0.0787768209)
def hs079():
    x = _x(5)
    f = ((x[0] - 1) ** 2 + (x[0] - x[1]) ** 2 + (x[1] - x[2]) ** 2 + (x[2] - x[3]) ** 4
         + (x[3] - x[4]) ** 4)
    g = ca.vertcat(x[0] + x[1] ** 2 + x[2] ** 3 - 2 - 3 * np.sqrt(2),
                   x[1] - x[2] ** 2 + x[3] + 2 - 2 * np.sqrt(2), x[0] * x[4] - 2)
    return ({"x": x, "f": f, "g": g}, [2.0] * 5, -inf, inf, [0.0] * 3, [0.0] * 3)


@_hs(100, 680.6300573)
def hs100():
    x = _x(7)
    f = ((x[0] - 10) ** 2 + 5 * (x[1] - 12) ** 2 + x[2] ** 4 + 3 * (x[3] - 11) ** 2
         + 10 * x[4] ** 6 + 7 * x[5] ** 2 + x[6] ** 4 - 4 * x[5] * x[6] - 10 * x[5] - 8 * x[6])
    g = ca.vertcat(
        127 - 2 * x[0] ** 2 - 3 * x[1] ** 4 - x[2] - 4 * x[3] ** 2 - 5 * x[4],
        282 - 7 * x[0] - 3 * x[1] - 10 * x[2] ** 2 - x[3] + x[4],
        196 - 23 * x[0] - x[1] ** 2 - 6 * x[5] ** 2 + 8 * x[6],
        -4 * x[0] ** 2 - x[1] ** 2 + 3 * x[0] * x[1] - 2 * x[2] ** 2 - 5 * x[5] + 11 * x[6],
    )
    return ({"x": x, "f": f, "g": g}, [1.0, 2.0, 0.0, 4.0, 0.0, 1.0, 1.0], -inf, inf,
            [0.0] * 4, [inf] * 4)


# HS 106: the value printed in the 1981 book (7049.330923, from memory) is
# known to be slightly off; 7049.248 (from memory, later revision of the
# collection) is used with the 4-5 digits it carries.
@_hs(106, 7049.248, f_rtol=1e-5, note="revised value, from memory")
def hs106():
    x = _x(8)
    g = ca.vertcat(
        1 - 0.0025 * (x[3] + x[5]),
        1 - 0.0025 * (x[4] + x[6] - x[3]),
        1 - 0.01 * (x[7] - x[4]),
        x[0] * x[5] - 833.33252 * x[3] - 100 * x[0] + 83333.333,
        x[1] * x[6] - 1250 * x[4] - x[1] * x[3] + 1250 * x[3],
        x[2] * x[7] - 1250000 - x[2] * x[4] + 2500 * x[4],
    )
    return ({"x": x, "f": x[0] + x[1] + x[2], "g": g},
            [5000.0, 5000.0, 5000.0, 200.0, 350.0, 150.0, 225.0, 425.0],
            [100.0, 1000.0, 1000.0] + [10.0] * 5, [10000.0] * 3 + [1000.0] * 5, [0.0] * 6, [inf] * 6)


# --- analytic cases ---------------------------------------------------------

def _circle_linear():
    """min x1 + x2 s.t. x1^2 + x2^2 = 2: x* = (-1, -1), 1 + 2 lam x = 0 -> lam = 1/2."""
    x = _x(2)
    return ({"x": x, "f": x[0] + x[1], "g": ca.sumsqr(x)}, [-0.5, -1.5], -inf, inf, [2.0], [2.0])


def _signs():
    """Active bounds and rows of both kinds, multipliers from stationarity.

    min (x1-2)^2 + (x2-2)^2 + (x3+1)^2 + (x4-3)^2 + (x5-3)^2
    s.t. x1 + x2 <= 2 (lam = +2), x1 - x2 >= -10 (inactive), x4 >= 5 as a row
    (lam = -4), x3 >= 0 as a bound (lam_x = -2), x5 <= 1 as a bound (lam_x = +4).
    x* = (1, 1, 0, 5, 1), f* = 1 + 1 + 1 + 4 + 4 = 11.
    """
    x = _x(5)
    f = (x[0] - 2) ** 2 + (x[1] - 2) ** 2 + (x[2] + 1) ** 2 + (x[3] - 3) ** 2 + (x[4] - 3) ** 2
    g = ca.vertcat(x[0] + x[1], x[0] - x[1], x[3])
    return ({"x": x, "f": f, "g": g}, [0.0] * 5, [-inf, -inf, 0.0, -inf, -inf],
            [inf, inf, inf, inf, 1.0], [-inf, -10.0, 5.0], [2.0, inf, inf])


def _entropy():
    """max entropy: min sum x ln x s.t. sum x = 1, x >= 0: x = 1/n, f = -ln n.

    Stationarity ln x + 1 + lam = 0 gives lam = ln n - 1 (n = 4).
    """
    x = _x(4)
    return ({"x": x, "f": ca.sum1(x * ca.log(x)), "g": ca.sum1(x)}, [0.1, 0.2, 0.3, 0.4],
            1e-12, inf, [1.0], [1.0])


def _duplicate_rows():
    """Dependent constraint gradients: x1 + x2 = 1 twice (scaled). x* = (1/2, 1/2), f* = 1/2."""
    x = _x(2)
    return ({"x": x, "f": ca.sumsqr(x), "g": ca.vertcat(x[0] + x[1], 2 * x[0] + 2 * x[1])},
            [3.0, -1.0], -inf, inf, [1.0, 2.0], [1.0, 2.0])


def _weakly_active():
    """Zero multiplier on an active bound: min (x1-1)^2 + x2^2, x1 <= 1: x* = (1, 0), lam = 0."""
    x = _x(2)
    return ({"x": x, "f": (x[0] - 1) ** 2 + x[1] ** 2, "g": x[0]}, [-2.0, 3.0], -inf, inf, [-inf], [1.0])


def _concave_box():
    """Concave objective on a box: min -(x1^2 + x2^2), -1 <= x <= 2, from (1.5, 1.5): x* = (2, 2), f* = -8."""
    x = _x(2)
    return ({"x": x, "f": -ca.sumsqr(x)}, [1.5, 1.5], -1.0, 2.0, None, None)


def _saddle_equality():
    """Indefinite Hessian, convex on the null space: min x1^2 - x2^2 s.t. x2 = 1 + x1/2.

    Null-space curvature 1 - 1/4 > 0; stationarity gives x1 = 2/3 * (1 + x1/2) ... solving
    2 x1 - 2 x2 (1/2) = 0 with x2 = 1 + x1/2 -> x1 = 2/3, x2 = 4/3, f* = 4/9 - 16/9 = -4/3.
    """
    x = _x(2)
    return ({"x": x, "f": x[0] ** 2 - x[1] ** 2, "g": x[1] - 0.5 * x[0]}, [0.0, 0.0], -inf, inf,
            [1.0], [1.0])


def _infeasible_disc_halfplane():
    """x1^2 + x2^2 <= 1 and x1 + x2 >= 3 cannot both hold (max of x1 + x2 on the disc is sqrt 2)."""
    x = _x(2)
    return ({"x": x, "f": x[0] ** 2 + x[1], "g": ca.vertcat(ca.sumsqr(x), x[0] + x[1])},
            [0.0, 0.0], -inf, inf, [-inf, 3.0], [1.0, inf])


def _infeasible_linear():
    """x1 + x2 >= 2 and x1 + x2 <= 1."""
    x = _x(2)
    return ({"x": x, "f": ca.sumsqr(x), "g": ca.vertcat(x[0] + x[1], x[0] + x[1])},
            [0.0, 0.0], -inf, inf, [2.0, -inf], [inf, 1.0])


def _infeasible_square():
    """x1^2 + 1 = 0 has no real solution; least violation at x1 = 0."""
    x = _x(2)
    return ({"x": x, "f": x[1] ** 2, "g": x[0] ** 2 + 1}, [1.0, 1.0], -inf, inf, [0.0], [0.0])


def _infeasible_bounds():
    """x1 * x2 = 10 with 0 <= x1, x2 <= 2 (max of x1 x2 is 4)."""
    x = _x(2)
    return ({"x": x, "f": x[0] + x[1], "g": x[0] * x[1]}, [1.0, 1.0], 0.0, 2.0, [10.0], [10.0])


def _recycle_loop():
    """Flowsheet-like: feed, CSTR, perfect separator, recycle with purge (invented numbers).

    Variables: feed F, reactor inlet a_in, outlet a_out, product b_out,
    recycle r, purge w, purge fraction s, conversion X. First-order CSTR
    with k V = 5 (flow units) gives X = kV / (a_in + kV). The overall
    balance F = w + b_out is implied by the others (redundant row, so the
    constraint gradients are dependent, as with closed balances in real
    flowsheets). Maximise 10 b_out - 2 F - 0.5 a_in with b_out <= 6.
    Optimum from IPOPT only (no closed form).
    """
    x = _x(8)
    F, a_in, a_out, b_out, r, w, s_, X = (x[i] for i in range(8))
    kV = 5.0
    g = ca.vertcat(
        a_in - F - r,
        X * (a_in + kV) - kV,
        a_out - a_in * (1 - X),
        b_out - a_in * X,
        r - (1 - s_) * a_out,
        w - s_ * a_out,
        F - w - b_out,  # redundant overall balance
        b_out,
    )
    lbx = [0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.01, 0.0]
    ubx = [10.0, 100.0, 100.0, 100.0, 100.0, 100.0, 1.0, 1.0]
    return ({"x": x, "f": -(10 * b_out - 2 * F - 0.5 * a_in), "g": g},
            [5.0, 8.0, 4.0, 4.0, 3.0, 1.0, 0.25, 0.5], lbx, ubx,
            [0.0] * 7 + [-inf], [0.0] * 7 + [6.0])


OTHER = [
    Problem("recycle_loop", "flowsheet", None, "IPOPT reference only", _recycle_loop,
            unique_multipliers=False),
    Problem("circle_linear", "analytic", -2.0, "analytic", _circle_linear, x_star=(-1.0, -1.0),
            lam_g_star=(0.5,)),
    Problem("signs", "analytic", 11.0, "analytic", _signs, x_star=(1.0, 1.0, 0.0, 5.0, 1.0),
            lam_g_star=(2.0, 0.0, -4.0), lam_x_star=(0.0, 0.0, -2.0, 0.0, 4.0)),
    Problem("entropy4", "analytic", -np.log(4.0), "analytic", _entropy, x_star=(0.25,) * 4,
            lam_g_star=(np.log(4.0) - 1,)),
    Problem("duplicate_rows", "degenerate", 0.5, "analytic", _duplicate_rows, x_star=(0.5, 0.5),
            unique_multipliers=False),
    Problem("weakly_active", "degenerate", 0.0, "analytic", _weakly_active, x_star=(1.0, 0.0),
            lam_g_star=(0.0,)),
    Problem("concave_box", "nonconvex", -8.0, "analytic", _concave_box, x_star=(2.0, 2.0),
            lam_x_star=(4.0, 4.0)),
    Problem("saddle_equality", "nonconvex", -4.0 / 3.0, "analytic", _saddle_equality,
            x_star=(2.0 / 3.0, 4.0 / 3.0)),
    Problem("infeasible_disc_halfplane", "infeasible", None, "analytic", _infeasible_disc_halfplane),
    Problem("infeasible_linear", "infeasible", None, "analytic", _infeasible_linear),
    Problem("infeasible_square", "infeasible", None, "analytic", _infeasible_square),
    Problem("infeasible_bounds", "infeasible", None, "analytic", _infeasible_bounds),
]

HS = [hs006, hs007, hs010, hs011, hs012, hs014, hs021, hs026, hs027, hs028, hs035, hs039, hs040,
      hs042, hs046, hs047, hs048, hs051, hs065, hs071, hs076, hs077, hs078, hs079, hs100, hs106]

CATALOGUE: list[Problem] = HS + OTHER
BY_NAME = {pr.name: pr for pr in CATALOGUE}


def build(problem: Problem) -> tuple:
    """``(nlp, x0, lbx, ubx, lbg, ubg)`` of a catalogue problem, fresh expressions."""
    return problem.make()
