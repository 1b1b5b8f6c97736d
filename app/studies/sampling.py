"""Distributions of varied design values and their joint samples (tolerance studies).

Each varied design value X_i has a marginal distribution about its nominal value x_i:

    normal   X_i = x_i + σ_i Z_i,        Z_i ~ N(0, 1)
    uniform  X_i = lo_i + (hi_i − lo_i) U_i,   U_i ~ U(0, 1)

σ_i, or the half-width of a uniform interval about x_i, is absolute (a quantity) or relative
(a percentage of |x_i|); a uniform interval may also be given by its bounds.

Correlation (Gaussian copula): with the correlation matrix R = L Lᵀ (Cholesky) of the normal
scores, independent uniforms U (a Latin hypercube, McKay, Beckman & Conover 1979, or a scrambled
Sobol sequence, Sobol' 1967; :mod:`scipy.stats.qmc`) give Z = Φ⁻¹(U), correlated scores
Z' = Z Lᵀ and the correlated uniforms U' = Φ(Z') fed to each marginal's inverse distribution
function. Without correlations U' = U and the space-filling design is kept exactly.

Section grammar (in [tolerances])::

    [tolerances.inputs]
    "diaphragm.thickness" = "normal 5 %"          # σ relative to the nominal value
    "diaphragm.residual_stress" = "normal 20 MPa"  # σ absolute
    "backplate.gap" = "uniform 10 %"               # nominal ± 10 %
    "backplate.hole_radius" = "uniform 3.8 um .. 4.2 um"

    [tolerances.correlations]
    "diaphragm.thickness, backplate.gap" = 0.5
"""
from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from diagap.design import DesignError
from diagap.quantities import quantity_text
from diagap.studies.spec import design_value, input_field

__all__ = ["Varied", "parse_inputs", "parse_correlations", "unit_samples", "joint_samples",
           "METHODS"]

METHODS = ("lhs", "sobol")
#: a normal spread is refused when its mean ± NORMAL_REACH·σ leaves the design key's allowed
#: range (0.27 % of the samples beyond ±3σ would be designs that cannot exist: a spread that
#: wide is a typing slip, or calls for a uniform interval inside the range)
NORMAL_REACH = 3.0
_PERCENT = re.compile(r"\s*(?P<num>[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*%\s*")
_EPS = 1e-12


@dataclass(frozen=True)
class Varied:
    """One varied design value: ``kind`` "normal" (a = mean, b = σ) or "uniform" (a = low,
    b = high), SI."""

    path: str
    kind: str
    nominal: float
    a: float
    b: float
    text: str = ""

    def from_unit(self, u: np.ndarray) -> np.ndarray:
        """Values for uniforms ``u`` in (0, 1) (the inverse distribution function)."""
        from scipy.stats import norm

        u = np.clip(np.asarray(u, float), _EPS, 1.0 - _EPS)
        if self.kind == "normal":
            return self.a + self.b * norm.ppf(u)
        return self.a + (self.b - self.a) * u

    @property
    def std(self) -> float:
        return self.b if self.kind == "normal" else (self.b - self.a) / np.sqrt(12.0)

    def to_dict(self) -> dict:
        out = {"path": self.path, "distribution": self.kind, "nominal": self.nominal,
               "text": self.text}
        out.update({"mean": self.a, "std": self.b} if self.kind == "normal" else
                   {"low": self.a, "high": self.b})
        return out


def _spread(path: str, text: str, nominal: float, where: str) -> float:
    m = _PERCENT.fullmatch(text)
    if m is not None:
        if nominal == 0.0:
            raise DesignError(f"{where} = {text!r}: a relative spread needs a non-zero nominal "
                              f"value ({path} is 0); give an absolute one")
        return float(m.group("num")) / 100.0 * abs(nominal)
    return quantity_text(where, text, input_field(path, where))


def _inside_schema(path: str, where: str, spec: str, lo: float, hi: float, what: str) -> None:
    """A one-line error when [lo, hi] leaves the allowed range of the design key ``path``."""
    from diagap.quantities import _bounds

    f = input_field(path, where)
    for end, x in (("low", lo), ("high", hi)):
        try:
            _bounds(f"{where} = {spec!r}: {what} {end} end", x, x, f)
        except DesignError as exc:
            raise DesignError(f"{exc} (the allowed range of {path}); narrow the spread") \
                from None


def _one(path: str, spec, design) -> Varied:
    where = f"tolerances.inputs.{path}"
    input_field(path, where)
    if not isinstance(spec, str) or not spec.strip():
        raise DesignError(f"{where} = {spec!r}: expected \"normal SIGMA\" or \"uniform "
                          f"HALF-WIDTH\" or \"uniform LOW .. HIGH\" (SIGMA like \"5 %\" or "
                          f"\"20 MPa\")")
    kind, _, rest = spec.strip().partition(" ")
    nominal = design_value(design, path)
    if kind == "normal":
        sigma = _spread(path, rest.strip(), nominal, where)
        if not sigma > 0:
            raise DesignError(f"{where} = {spec!r}: σ must be positive")
        _inside_schema(path, where, spec, nominal - NORMAL_REACH * sigma,
                       nominal + NORMAL_REACH * sigma, f"mean ± {NORMAL_REACH:g}σ,")
        return Varied(path, "normal", nominal, nominal, sigma, spec)
    if kind == "uniform":
        if ".." in rest:
            lo_t, hi_t = rest.split("..", 1)
            f = input_field(path, where)
            lo, hi = quantity_text(where, lo_t.strip(), f), quantity_text(where, hi_t.strip(), f)
        else:
            half = _spread(path, rest.strip(), nominal, where)
            if not half > 0:
                raise DesignError(f"{where} = {spec!r}: the half-width must be positive")
            lo, hi = nominal - half, nominal + half
        if not hi > lo:
            raise DesignError(f"{where} = {spec!r}: the interval is empty (low must be below "
                              f"high)")
        _inside_schema(path, where, spec, lo, hi, "the interval's")
        return Varied(path, "uniform", nominal, lo, hi, spec)
    raise DesignError(f"{where} = {spec!r}: the distribution must be normal or uniform")


def parse_inputs(table, design) -> tuple[Varied, ...]:
    """The varied values of ``[tolerances.inputs]`` (a dict path → text)."""
    if not isinstance(table, dict) or not table:
        raise DesignError("tolerances.inputs: expected a table of design keys, e.g. "
                          "\"backplate.gap\" = \"uniform 10 %\"")
    return tuple(_one(path, spec, design) for path, spec in table.items())


def parse_correlations(table, inputs) -> np.ndarray | None:
    """The correlation matrix of the normal scores from ``[tolerances.correlations]``."""
    if not table:
        return None
    if not isinstance(table, dict):
        raise DesignError("tolerances.correlations: expected a table \"PATH, PATH\" = r")
    index = {v.path: i for i, v in enumerate(inputs)}
    R = np.eye(len(inputs))
    for pair, r in table.items():
        where = f"tolerances.correlations.{pair!r}"
        names = [s.strip() for s in pair.split(",")]
        if len(names) != 2 or any(n not in index for n in names) or names[0] == names[1]:
            raise DesignError(f"{where}: expected two different varied inputs separated by a "
                              f"comma (varied: {', '.join(index)})")
        if isinstance(r, bool) or not isinstance(r, (int, float)) or not -1.0 < r < 1.0:
            raise DesignError(f"{where} = {r!r}: must be a number in (-1, 1)")
        i, j = index[names[0]], index[names[1]]
        R[i, j] = R[j, i] = float(r)
    try:
        np.linalg.cholesky(R)
    except np.linalg.LinAlgError:
        raise DesignError("tolerances.correlations: the correlation matrix is not positive "
                          "definite (the coefficients contradict each other)") from None
    return R


def unit_samples(n: int, d: int, method: str = "lhs", seed: int | None = 0) -> np.ndarray:
    """``n`` points in (0, 1)^d: a Latin hypercube or a scrambled Sobol sequence."""
    from scipy.stats import qmc

    if method not in METHODS:
        raise DesignError(f"method = {method!r}: must be one of {', '.join(METHODS)}")
    if n < 2:
        raise DesignError(f"samples = {n!r}: need at least 2")
    engine = qmc.LatinHypercube(d, seed=seed) if method == "lhs" else qmc.Sobol(d, seed=seed)
    if method == "sobol":
        import warnings

        with warnings.catch_warnings():  # n need not be a power of 2 for a study
            warnings.simplefilter("ignore")
            return engine.random(n)
    return engine.random(n)


def joint_samples(inputs, u: np.ndarray, correlation: np.ndarray | None = None) -> np.ndarray:
    """Values (n, d) of the varied inputs for uniforms ``u`` (n, d), with the Gaussian copula
    of ``correlation`` (module docstring)."""
    from scipy.stats import norm

    u = np.clip(np.asarray(u, float), _EPS, 1 - _EPS)
    if correlation is not None:
        L = np.linalg.cholesky(correlation)
        u = norm.cdf(norm.ppf(u) @ L.T)
    return np.column_stack([v.from_unit(u[:, i]) for i, v in enumerate(inputs)])
