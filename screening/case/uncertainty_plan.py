"""The uncertainty block of a case: uncertain inputs, their distributions and sampling.

Uncertain inputs are named by their dotted case path and given a distribution
(uniform, normal, triangular, lognormal). Spreads may be absolute or relative to the
case's own value (``sd: 10 %``, or a ``gsd`` about it), so one block in a register's
base case applies to every row's own values. Samples are drawn with numpy's PCG64
generator or, as an option, by Latin hypercube sampling (``scipy.stats.qmc``);
physically impossible samples are rejected and counted, never clipped.

Inputs may be correlated: ``correlation: {inputs: [path, ...], matrix: [[1, r], [r, 1]]}`` names normal or
lognormal inputs and their correlation matrix.  Sampling is then correlated normal (a Gaussian copula: the
inputs' standard normal scores are drawn with that correlation), so the matrix is the correlation of the
values of a normal input and of the logarithm of a lognormal one; inputs not named stay independent.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from screening.case.paths import locate_quantity, path_parts
from screening.case.schema import CaseError, CaseSpec, FieldProblem
from screening.case.units import FINITE_EXPECTED, UnitError, non_finite, not_finite_message, parse_quantity

DEFAULT_SAMPLES = 10_000
DEFAULT_SEED = 20261201
MAX_SAMPLES = 1_000_000
DISTRIBUTIONS = ("uniform", "normal", "triangular", "lognormal")
DISTRIBUTION_PARAMETERS = {"uniform": {"low", "high", "half_width"}, "triangular": {"low", "mode", "high", "half_width"},
                           "normal": {"mean", "sd"}, "lognormal": {"median", "gsd"}}


# ------------------------------------------------------------------ parsing the block


@dataclass(frozen=True)
class UncertainInput:
    path: str
    parts: tuple
    distribution: str
    params: dict  # SI floats: low/high/mode/mean/sd/median/gsd
    nominal: float  # the case's own value, SI
    dimension: str
    check: str | None
    text_unit: str  # unit the case wrote the value in (for reporting allowable values)


@dataclass(frozen=True)
class UncertaintyPlan:
    inputs: tuple[UncertainInput, ...]
    samples: int
    seed: int
    sampling: str  # "random" | "latin-hypercube"
    correlation: tuple | None = None  # (indices into inputs, correlation matrix as a tuple of rows)


def _param(raw, dimension: str, nominal: float, where: str, problems: list, relative_ok: bool,
           difference: bool = False):
    """Parse one distribution parameter; relative '%' values are a fraction of the nominal value."""
    if raw is None:
        return None
    if non_finite(raw):
        problems.append(FieldProblem(where, not_finite_message(raw, "a quantity with its unit" + (
            ", or a spread as a percentage of the case's own value (e.g. '10 %')" if relative_ok else ""))))
        return None
    text = raw if isinstance(raw, str) else None
    if isinstance(raw, (int, float)) and not isinstance(raw, bool):
        if dimension == "fraction":
            return float(raw)
        problems.append(FieldProblem(where, f"the number {raw!r} has no unit; write it with a unit, or as a "
                                            f"percentage of the case's own value (e.g. '10 %')"))
        return None
    if text is None:
        problems.append(FieldProblem(where, f"expected a quantity as text, got {type(raw).__name__}"))
        return None
    stripped = text.strip()
    if stripped.endswith("%") and dimension != "fraction":
        if not relative_ok:
            problems.append(FieldProblem(where, "a percentage is allowed here only for spreads (sd, half_width)"))
            return None
        try:
            pct = float(stripped[:-1])
        except ValueError:
            problems.append(FieldProblem(where, f"'{text}' is not a percentage"))
            return None
        spread = abs(nominal) * pct / 100.0
        if not math.isfinite(spread):
            problems.append(FieldProblem(where, f"'{text}' of the case's own value is not a finite number; "
                                                f"{FINITE_EXPECTED}"))
            return None
        return spread
    dim = "temperature_difference" if (difference and dimension == "temperature") else dimension
    try:
        return parse_quantity(text, dim).value
    except UnitError as exc:
        problems.append(FieldProblem(where, str(exc)))
        return None


def plan_uncertainty(spec: CaseSpec) -> UncertaintyPlan | None:
    """Validate the case's uncertainty block against the case; raise CaseError with field paths."""
    block = spec.uncertainty
    if block is None:
        return None
    problems: list[FieldProblem] = []
    if not isinstance(block, dict):
        raise CaseError([FieldProblem("uncertainty", "expected a mapping with samples, seed and inputs")])
    allowed = {"samples", "seed", "inputs", "sampling", "correlation"}
    for key in block:
        if key not in allowed:
            problems.append(FieldProblem(f"uncertainty.{key}", f"unknown field '{key}'; expected one of: "
                                                              f"{', '.join(sorted(allowed))}"))
    samples = block.get("samples", DEFAULT_SAMPLES)
    if isinstance(samples, bool) or not isinstance(samples, int) or not (10 <= samples <= MAX_SAMPLES):
        problems.append(FieldProblem("uncertainty.samples", f"expected a whole number from 10 to {MAX_SAMPLES}, "
                                                            f"got {samples!r}"))
        samples = DEFAULT_SAMPLES
    seed = block.get("seed", DEFAULT_SEED)
    if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        problems.append(FieldProblem("uncertainty.seed", f"expected a whole number >= 0, got {seed!r}"))
        seed = DEFAULT_SEED
    sampling = block.get("sampling", "random")
    if sampling not in ("random", "latin-hypercube"):
        problems.append(FieldProblem("uncertainty.sampling", f"'{sampling}' is not allowed; expected 'random' or "
                                                             f"'latin-hypercube'"))
    inputs_raw = block.get("inputs")
    if not isinstance(inputs_raw, dict) or not inputs_raw:
        problems.append(FieldProblem("uncertainty.inputs", "give at least one uncertain input: a dotted case path "
                                                           "with a distribution"))
        raise CaseError(problems)
    inputs = []
    for path, dist in inputs_raw.items():
        where = f"uncertainty.inputs.{path}"
        parts = path_parts(str(path))
        try:
            _, _, q, marker = locate_quantity(spec, parts)
        except KeyError:
            problems.append(FieldProblem(where, f"'{path}' is not a quantity given in this case; name a field "
                                                f"the case sets, such as heat_loss.ua or heat_sources.0.power"))
            continue
        if not isinstance(dist, dict):
            problems.append(FieldProblem(where, "expected {distribution: ..., and its parameters}"))
            continue
        kind = dist.get("distribution")
        if kind not in DISTRIBUTIONS:
            problems.append(FieldProblem(f"{where}.distribution", f"'{kind}' is not allowed; expected one of "
                                                                  f"{', '.join(DISTRIBUTIONS)}"))
            continue
        keys = DISTRIBUTION_PARAMETERS[kind]
        for k in dist:
            if k != "distribution" and k not in keys:
                problems.append(FieldProblem(f"{where}.{k}", f"unknown parameter '{k}' for a {kind} distribution; "
                                                             f"expected: {', '.join(sorted(keys))}"))
        nominal = q.si
        dim = marker.dimension
        p: dict[str, float | None] = {}
        n_before = len(problems)
        if kind in ("uniform", "triangular"):
            hw = _param(dist.get("half_width"), dim, nominal, f"{where}.half_width", problems, True, difference=True)
            lo = _param(dist.get("low"), dim, nominal, f"{where}.low", problems, False)
            hi = _param(dist.get("high"), dim, nominal, f"{where}.high", problems, False)
            if hw is not None:
                if lo is not None or hi is not None:
                    problems.append(FieldProblem(where, "give low and high, or half_width, not both"))
                lo, hi = nominal - hw, nominal + hw
            mode = _param(dist.get("mode"), dim, nominal, f"{where}.mode", problems, False) if kind == "triangular" else None
            if len(problems) == n_before:
                if lo is None or hi is None:
                    problems.append(FieldProblem(where, f"a {kind} distribution needs low and high (or half_width)"))
                elif not hi > lo:
                    problems.append(FieldProblem(where, "high must be greater than low"))
                elif kind == "triangular":
                    mode = nominal if mode is None else mode
                    if not lo <= mode <= hi:
                        problems.append(FieldProblem(f"{where}.mode", "the mode must lie between low and high"))
            p = {"low": lo, "high": hi, "mode": mode}
        elif kind == "normal":
            mean = _param(dist.get("mean"), dim, nominal, f"{where}.mean", problems, False)
            sd = _param(dist.get("sd"), dim, nominal, f"{where}.sd", problems, True, difference=True)
            if len(problems) == n_before:
                if sd is None or not sd > 0:
                    problems.append(FieldProblem(f"{where}.sd", "a normal distribution needs sd greater than zero"))
            p = {"mean": nominal if mean is None else mean, "sd": sd}
        else:
            median = _param(dist.get("median"), dim, nominal, f"{where}.median", problems, False)
            gsd = dist.get("gsd")
            if non_finite(gsd):
                problems.append(FieldProblem(f"{where}.gsd", not_finite_message(
                    gsd, "the geometric standard deviation, a number greater than 1 (e.g. 1.5)")))
                gsd = None
            elif isinstance(gsd, bool) or not isinstance(gsd, (int, float)) or not gsd > 1:
                problems.append(FieldProblem(f"{where}.gsd", f"the geometric standard deviation must be a number "
                                                             f"greater than 1, got {gsd!r}"))
            median = nominal if median is None else median
            if not median > 0:
                problems.append(FieldProblem(f"{where}.median", "a lognormal distribution needs a positive median"))
            p = {"median": median, "gsd": float(gsd) if isinstance(gsd, (int, float)) else None}
        unit = q.text.split(None, 1)[1] if len(q.text.split(None, 1)) == 2 else ""
        inputs.append(UncertainInput(str(path), parts, kind, p, nominal, dim, marker.check, unit))
    correlation = None
    if "correlation" in block and not problems:
        correlation = _plan_correlation(block["correlation"], inputs, problems)
    if problems:
        raise CaseError(problems)
    return UncertaintyPlan(tuple(inputs), int(samples), int(seed), sampling, correlation)


def _plan_correlation(raw, inputs, problems):
    """Validate ``uncertainty.correlation``: named normal/lognormal inputs and a valid correlation matrix."""
    where = "uncertainty.correlation"
    if not isinstance(raw, dict) or set(raw) - {"inputs", "matrix"} or "inputs" not in raw or "matrix" not in raw:
        problems.append(FieldProblem(where, "expected {inputs: [dotted paths of uncertain inputs], matrix: "
                                            "[[1, r], [r, 1]]}"))
        return None
    names = raw["inputs"]
    if not isinstance(names, list) or len(names) < 2 or not all(isinstance(n, str) for n in names):
        problems.append(FieldProblem(f"{where}.inputs", "expected a list of two or more input paths"))
        return None
    index = {inp.path: i for i, inp in enumerate(inputs)}
    picked = []
    for j, name in enumerate(names):
        if name not in index:
            problems.append(FieldProblem(f"{where}.inputs.{j}", f"'{name}' is not one of uncertainty.inputs; "
                                                                f"expected one of: {', '.join(index)}"))
        elif inputs[index[name]].distribution not in ("normal", "lognormal"):
            problems.append(FieldProblem(f"{where}.inputs.{j}", f"'{name}' has a {inputs[index[name]].distribution} "
                                                                f"distribution; correlated inputs must be normal "
                                                                f"or lognormal"))
        elif index[name] in picked:
            problems.append(FieldProblem(f"{where}.inputs.{j}", f"'{name}' is named twice"))
        else:
            picked.append(index[name])
    if len(picked) != len(names):
        return None
    d = len(names)
    matrix = raw["matrix"]
    if (not isinstance(matrix, list) or len(matrix) != d
            or not all(isinstance(row, list) and len(row) == d for row in matrix)):
        problems.append(FieldProblem(f"{where}.matrix", f"expected a {d} x {d} matrix (a list of {d} rows of "
                                                        f"{d} numbers), one row and column per named input"))
        return None
    values = np.zeros((d, d))
    for i, row in enumerate(matrix):
        for j, v in enumerate(row):
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or abs(v) > 1:
                problems.append(FieldProblem(f"{where}.matrix.{i}.{j}", f"expected a number from -1 to 1, got "
                                                                        f"{v!r}"))
                return None
            values[i, j] = v
    if not np.allclose(np.diag(values), 1.0):
        problems.append(FieldProblem(f"{where}.matrix", "the diagonal must be 1 (each input with itself)"))
    elif not np.allclose(values, values.T, atol=1e-12):
        problems.append(FieldProblem(f"{where}.matrix", "must be symmetric (row i, column j equal to row j, column i)"))
    elif np.linalg.eigvalsh(values).min() < -1e-9:
        problems.append(FieldProblem(f"{where}.matrix", "is not a correlation matrix (not positive semi-definite: "
                                                        "some of its correlations contradict the others)"))
    else:
        return tuple(picked), tuple(tuple(float(v) for v in row) for row in values)
    return None


# ------------------------------------------------------------------ sampling


def _ppf(inp: UncertainInput, u: np.ndarray) -> np.ndarray:
    from scipy import stats

    p = inp.params
    if inp.distribution == "uniform":
        return p["low"] + (p["high"] - p["low"]) * u
    if inp.distribution == "triangular":
        width = p["high"] - p["low"]
        c = (p["mode"] - p["low"]) / width
        return stats.triang.ppf(u, c, loc=p["low"], scale=width)
    if inp.distribution == "normal":
        return stats.norm.ppf(u, loc=p["mean"], scale=p["sd"])
    return p["median"] * np.exp(math.log(p["gsd"]) * stats.norm.ppf(u))


def quantile(inp: UncertainInput, q: float) -> float:
    return float(_ppf(inp, np.array([q]))[0])


def draw(plan: UncertaintyPlan) -> np.ndarray:
    """(samples, inputs) array of SI values."""
    d = len(plan.inputs)
    if plan.sampling == "latin-hypercube":
        from scipy.stats import qmc

        u = qmc.LatinHypercube(d=d, seed=np.random.default_rng(plan.seed)).random(plan.samples)
    else:
        u = np.random.default_rng(plan.seed).random((plan.samples, d))
    u = np.clip(u, 1e-15, 1 - 1e-15)
    if plan.correlation is not None:
        u = correlate_uniforms(u, *plan.correlation)
    return np.column_stack([_ppf(inp, u[:, j]) for j, inp in enumerate(plan.inputs)])


def correlate_uniforms(u: np.ndarray, columns, matrix) -> np.ndarray:
    """Give the named columns of independent uniform samples the correlation ``matrix`` of their normal scores.

    z = Phi^-1(u) are independent standard normals; z L^T, with L L^T the matrix (Cholesky, or a symmetric
    square root when the matrix is only semi-definite), has that correlation; u = Phi(z L^T) again.
    """
    from scipy import stats

    cols = list(columns)
    c = np.asarray(matrix, dtype=float)
    try:
        root = np.linalg.cholesky(c)
    except np.linalg.LinAlgError:
        w, v = np.linalg.eigh(c)
        root = v @ np.diag(np.sqrt(np.clip(w, 0.0, None)))
    out = u.copy()
    z = stats.norm.ppf(u[:, cols]) @ root.T
    out[:, cols] = np.clip(stats.norm.cdf(z), 1e-15, 1 - 1e-15)
    return out


def physically_possible(inp: UncertainInput, values: np.ndarray) -> np.ndarray:
    ok = np.isfinite(values)
    if inp.check == "positive" or inp.check == "absolute":
        ok &= values > 0
    elif inp.check == "nonnegative":
        ok &= values >= 0
    elif inp.check == "unit_fraction":
        ok &= (values > 0) & (values <= 1)
    elif inp.check == "day_length":
        ok &= (values > 0) & (values <= 86400.0)
    elif inp.check == "time_of_day":
        ok &= (values >= 0) & (values < 86400.0)
    if inp.parts[-1] == "accumulated_fraction":
        ok &= (values > 0) & (values <= 1)
    if inp.parts[-1] == "initial_conversion":
        ok &= (values >= 0) & (values < 1)
    if inp.parts[-1] == "fill":
        ok &= values > 0
    return ok
