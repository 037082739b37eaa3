"""scipy.special members of the allow-list, with their mpmath equivalents (imported lazily:
scipy is loaded only when a unit calls one of them)."""
from __future__ import annotations

from collections.abc import Callable
from typing import Any

import mpmath
import numpy as np

from auditor.numerics.allow import Pair, _elementwise, _ref_lgamma
from auditor.numerics.budget import MAX_FACTORIAL, BudgetExceeded


def _ref_xlogy(x: Any, y: Any) -> Any:
    return 0 if x == 0 else x * mpmath.log(y)


def _ref_xlog1py(x: Any, y: Any) -> Any:
    return 0 if x == 0 else x * mpmath.log1p(y)


def _ref_exprel(x: Any) -> Any:
    return mpmath.mpf(1) if x == 0 else mpmath.expm1(x) / x


def _ref_ndtr(x: Any) -> Any:
    return mpmath.erfc(-x / mpmath.sqrt(2)) / 2


def _ref_logsumexp(a: Any, *_: Any, **__: Any) -> Any:
    values = list(np.ravel(np.asarray(a, dtype=object)))
    return mpmath.log(mpmath.fsum(mpmath.exp(v) for v in values))


def scipy_pairs() -> dict[str, Pair]:
    """scipy.special members, imported only when a unit uses one."""
    from scipy import special as sc

    one = {
        "expm1": mpmath.expm1, "log1p": mpmath.log1p, "erf": mpmath.erf, "erfc": mpmath.erfc,
        "gamma": mpmath.gamma, "gammaln": _ref_lgamma, "exp1": mpmath.e1, "expi": mpmath.ei,
        "exprel": _ref_exprel, "ndtr": _ref_ndtr, "ndtri": lambda p: mpmath.sqrt(2) * mpmath.erfinv(2 * p - 1),
        "log_ndtr": lambda x: mpmath.log(_ref_ndtr(x)), "cosm1": lambda x: mpmath.cos(x) - 1,
        "expit": lambda x: 1 / (1 + mpmath.exp(-x)), "logit": lambda p: mpmath.log(p / (1 - p)),
        "psi": mpmath.digamma, "digamma": mpmath.digamma, "zeta": mpmath.zeta, "erfcx": lambda x: mpmath.exp(x * x) * mpmath.erfc(x),
        "factorial": mpmath.factorial,
        "j0": lambda x: mpmath.besselj(0, x), "j1": lambda x: mpmath.besselj(1, x),
        "y0": lambda x: mpmath.bessely(0, x), "y1": lambda x: mpmath.bessely(1, x),
        "i0": lambda x: mpmath.besseli(0, x), "i1": lambda x: mpmath.besseli(1, x),
        "k0": lambda x: mpmath.besselk(0, x), "k1": lambda x: mpmath.besselk(1, x),
        "log_expit": lambda x: -mpmath.log1p(mpmath.exp(-x)),
    }
    two = {
        "xlogy": _ref_xlogy, "xlog1py": _ref_xlog1py, "powm1": lambda x, y: mpmath.power(x, y) - 1,
        "beta": mpmath.beta, "jv": mpmath.besselj, "iv": mpmath.besseli, "kv": mpmath.besselk, "yv": mpmath.bessely,
    }
    # Names this scipy lacks are simply not allowed (older or newer releases differ).
    out: dict[str, Pair] = {f"scipy.special.{n}": (getattr(sc, n), _elementwise(f)) for n, f in one.items() if hasattr(sc, n)}
    out.update({f"scipy.special.{n}": (getattr(sc, n), _elementwise(f, 2)) for n, f in two.items() if hasattr(sc, n)})
    out["scipy.special.factorial"] = (_scipy_factorial(sc), _elementwise(mpmath.factorial))
    out["scipy.special.logsumexp"] = (sc.logsumexp, _ref_logsumexp)
    return out


def _scipy_factorial(sc: Any) -> Callable[..., Any]:
    def fact(n: Any, exact: bool = False) -> Any:
        if isinstance(n, (int, np.integer)) and n > MAX_FACTORIAL:
            raise BudgetExceeded(f"factorial({n}) is too large to evaluate")
        return sc.factorial(n, exact=exact)

    return fact


