"""Which qualified names are the numeric functions the rules care about, under any library."""
from __future__ import annotations

#: Modules whose elementary functions share meaning (exp is exp in all of them).
NUMERIC_MODULES: tuple[str, ...] = (
    "math",
    "cmath",
    "numpy",
    "numpy.emath",
    "numpy.ma",
    "scipy.special",
    "mpmath",
    "mpmath.mp",
    "mpmath.fp",
    "mpmath.iv",
    "torch",
    "jax.numpy",
    "cupy",
)

#: Spellings that mean the same function; the value is the canonical family name.
SYNONYMS: dict[str, str] = {
    "arctan": "atan",
    "arctan2": "atan2",
    "arcsin": "asin",
    "arccos": "acos",
    "arcsinh": "asinh",
    "arccosh": "acosh",
    "arctanh": "atanh",
    "power": "pow",
    "absolute": "abs",
    "fabs": "abs",
    "square": "square",
    "nansum": "sum",
    "nanmean": "mean",
    "nanvar": "var",
    "nanstd": "std",
    "fsum": "fsum",
    "add": "add",
    "subtract": "subtract",
    "multiply": "multiply",
    "true_divide": "divide",
    "divide": "divide",
    "ln": "log",
}

#: Families known in every numeric module (used to resolve `from numpy import *`).
FAMILIES: frozenset[str] = frozenset(
    {
        "exp", "expm1", "exp2", "log", "log1p", "log10", "log2", "sqrt", "cbrt",
        "sin", "cos", "tan", "asin", "acos", "atan", "atan2", "sinh", "cosh", "tanh",
        "asinh", "acosh", "atanh", "hypot", "pow", "abs", "square", "sum", "mean",
        "var", "std", "prod", "cumsum", "dot", "inner", "matmul", "fsum", "add",
        "subtract", "multiply", "divide", "erf", "erfc", "factorial", "gamma",
        "lgamma", "gammaln", "logsumexp", "softmax", "log_softmax", "cosm1",
        "float32", "float16", "half", "single", "float64", "double", "longdouble",
        "array", "asarray", "zeros", "ones", "empty", "full", "linspace", "arange",
        "inv", "solve", "det", "lstsq", "pinv", "slogdet", "cond", "matrix_rank",
        "ndtr", "log_ndtr", "ndtri", "xlogy", "xlog1py", "exprel", "logaddexp",
        "logaddexp2", "sinc", "sign", "copysign", "sqrt1pm1", "powm1", "e", "pi",
        "sinpi", "cospi",
    }
)

#: Extra modules whose members keep their own names (linear algebra, statistics).
LINALG_MODULES: tuple[str, ...] = ("numpy.linalg", "scipy.linalg", "torch.linalg", "jax.numpy.linalg")


def family_of(qualname: str | None) -> str | None:
    """The canonical function family of a qualified name, e.g. 'numpy.exp' -> 'exp'.

    Returns None when the name is not a numeric-library function we know.
    """
    if not qualname or "." not in qualname:
        return None
    module, _, attr = qualname.rpartition(".")
    if module in NUMERIC_MODULES or module in LINALG_MODULES:
        return SYNONYMS.get(attr, attr)
    return None


def module_of(qualname: str | None) -> str | None:
    """The module part of a qualified name ('numpy.exp' -> 'numpy')."""
    if not qualname or "." not in qualname:
        return None
    return qualname.rpartition(".")[0]
