"""Declarations a supplier makes about its variates: a ``scipy.stats`` law, or a table of odds.

``parse_dist_spec`` reads ``--dist`` text such as ``norm(loc=2, scale=3)`` or ``poisson(mu=3)`` (no
``eval``: :mod:`ast` and ``ast.literal_eval`` of numbers only); ``read_odds`` reads a CSV
(``outcome,probability``) or TOML (``[odds]``) table of outcome probabilities.  ``categories_for``
turns a discrete declaration into outcome categories (probabilities in a fixed order, the lower
cumulative probability of each, and the map from values to categories) for the conformance checks
of :mod:`rngassay.checks.transform.conformance`.  Nothing here is registered in the battery's
registry: these are inputs of ``rngassay fit``, not checks on uniforms.
"""

from __future__ import annotations

import ast
import csv
import io
import math
import os
import re
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any, Callable

import numpy as np

from ...errors import InputError

#: Sum of declared probabilities must be 1 within this.
SUM_TOL = 1e-9
#: Discrete tables: outcomes beyond the declared 1e-12 tails are lumped.
TABLE_TAIL = 1e-12
MAX_OUTCOMES = 1_000_000


@dataclass
class Declaration:
    """What the supplier declares: a frozen scipy law (continuous/discrete) or an odds table."""

    kind: str  # "continuous", "discrete" or "odds"
    spec: str  # normalised description, e.g. "norm(loc=2, scale=3)" or "odds from tiers.csv"
    frozen: Any = None
    outcomes: list[str] = field(default_factory=list)  # odds: outcome labels in declared order
    probs: np.ndarray | None = None  # odds: probabilities (normalised to sum 1)
    prizes: np.ndarray | None = None  # odds: optional payout per unit stake of each outcome (same order)


MAX_SPEC_CHARS = 200  # a --dist text longer than this is refused before parsing (deep nesting exhausts the parser)
MAX_NUMBER_DIGITS = 40  # digits of one number in --dist or an odds file: more cannot change a float64 anyway


def parse_dist_spec(spec: str) -> Declaration:
    """Parse ``NAME`` or ``NAME(param=value, ...)`` naming a ``scipy.stats`` distribution.

    No ``eval``: the text is parsed with :mod:`ast`, parameter values with ``ast.literal_eval``
    (numbers only).  Raises :class:`InputError` for unparsable text, unknown names, unknown or
    missing parameters and parameters scipy rejects.
    """
    from scipy import stats as sstats  # imported here: keeps `rngassay --help` fast

    hint = "write NAME or NAME(param=value, ...), e.g. norm, norm(loc=2, scale=3), gamma(a=2), poisson(mu=3)"
    text = (spec or "").strip()
    if not text:
        raise InputError("empty --dist", "", hint)
    if len(text) > MAX_SPEC_CHARS:
        raise InputError(f"--dist is {len(text)} characters long, more than the {MAX_SPEC_CHARS} allowed", "", hint)
    if any(len(d) > MAX_NUMBER_DIGITS for d in re.findall(r"[0-9_]+", text)):
        raise InputError(f"--dist {spec!r}: a number has more than {MAX_NUMBER_DIGITS} digits", "", hint)
    try:
        node = ast.parse(text, mode="eval").body
    except (SyntaxError, ValueError, MemoryError, RecursionError):
        raise InputError(f"cannot parse --dist {spec!r}", "", hint) from None
    kwargs: dict[str, float] = {}
    if isinstance(node, ast.Name):
        name = node.id
    elif isinstance(node, ast.Call) and isinstance(node.func, ast.Name):
        name = node.func.id
        if node.args:
            raise InputError(f"--dist {spec!r}: give parameters by name", "",
                             f"e.g. {name}({', '.join(f'{s}=...' for s in _param_names(name)) or 'loc=..., scale=...'})")
        for kw in node.keywords:
            if kw.arg is None:
                raise InputError(f"cannot parse --dist {spec!r}", "", hint)
            try:
                v = ast.literal_eval(kw.value)
                if isinstance(v, int) and not isinstance(v, bool):
                    v = float(v) if abs(v) >= 2**53 else v
            except (ValueError, SyntaxError, TypeError, OverflowError, MemoryError, RecursionError):
                raise InputError(f"--dist {spec!r}: parameter {kw.arg} must be a number", "", hint) from None
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
                raise InputError(f"--dist {spec!r}: parameter {kw.arg} must be a finite number", "", hint)
            kwargs[kw.arg] = v
    else:
        raise InputError(f"cannot parse --dist {spec!r}", "", hint)
    dist = getattr(sstats, name, None)
    if not isinstance(dist, (sstats.rv_continuous, sstats.rv_discrete)):
        raise InputError(f"unknown distribution {name!r}", "",
                         "name a scipy.stats distribution, e.g. norm, expon, gamma, cauchy, poisson, binom, geom")
    allowed = _param_names(name)
    for k in kwargs:
        if k not in allowed:
            raise InputError(f"--dist {spec!r}: {name} has no parameter {k!r}", "",
                             f"its parameters are: {', '.join(allowed)}")
    shapes = [s for s in allowed if s not in ("loc", "scale")]
    missing = [s for s in shapes if s not in kwargs]
    if missing:
        raise InputError(f"--dist {spec!r}: {name} needs parameter{'s' if len(missing) > 1 else ''} "
                         f"{', '.join(missing)}", "", f"e.g. {name}({', '.join(f'{s}=...' for s in shapes)})")
    try:
        with np.errstate(all="ignore"):
            frozen = dist(**kwargs)
            a, b = frozen.support()
            med = frozen.median()
    except Exception as e:  # scipy's own argument errors
        raise InputError(f"--dist {spec!r}: scipy.stats rejects the parameters ({e})", "",
                         f"its parameters are: {', '.join(allowed)}") from None
    if any(isinstance(v, float) and math.isnan(v) for v in (float(a), float(b), float(med))):
        raise InputError(f"--dist {spec!r}: invalid parameters for {name}", "",
                         "scipy.stats rejects them (e.g. scale must be > 0, a probability in [0, 1], "
                         "a count a whole number)")
    kind = "continuous" if isinstance(dist, sstats.rv_continuous) else "discrete"
    norm = name if not kwargs else f"{name}(" + ", ".join(f"{k}={v!r}" for k, v in kwargs.items()) + ")"
    return Declaration(kind, norm, frozen=frozen)


def _param_names(name: str) -> list[str]:
    from scipy import stats as sstats

    dist = getattr(sstats, name, None)
    if dist is None:
        return []
    shapes = [s.strip() for s in (dist.shapes or "").split(",") if s.strip()]
    extra = ["loc", "scale"] if isinstance(dist, sstats.rv_continuous) else ["loc"]
    return shapes + extra


def _parse_probability(text: Any, where: str) -> float:
    """A probability given as a number or a fraction string such as "1/100"."""
    if isinstance(text, bool):
        raise InputError(f"probability must be a number, not {text!r}", where)
    if isinstance(text, (int, float)):
        if isinstance(text, int) and len(str(abs(text))) > MAX_NUMBER_DIGITS:
            raise InputError(f"probability has more than {MAX_NUMBER_DIGITS} digits", where,
                             "write a number such as 0.01 or a fraction such as 1/100")
        v = float(text)
    else:
        s = str(text).strip()
        if any(len(d) > MAX_NUMBER_DIGITS for d in re.findall(r"[0-9_]+", s)):
            raise InputError(f"probability {s[:20]!r}... has a number of more than {MAX_NUMBER_DIGITS} digits", where,
                             "write a number such as 0.01 or a fraction such as 1/100")
        try:
            v = float(Fraction(s)) if "/" in s else float(s)
        except (ValueError, ZeroDivisionError, OverflowError):
            raise InputError(f"cannot read probability {s!r}", where,
                             "write a number such as 0.01 or a fraction such as 1/100") from None
    if not math.isfinite(v):
        raise InputError(f"probability {text!r} is not finite", where, "give a number in [0, 1]")
    if v < 0:
        raise InputError(f"negative probability {text!r}", where, "probabilities must be >= 0")
    if v > 1:
        raise InputError(f"probability {text!r} is above 1", where, "probabilities must be <= 1")
    return v


def read_odds(path: str | os.PathLike) -> Declaration:
    """Read an odds declaration: CSV with header ``outcome,probability``, or TOML with an
    ``[odds]`` table ``outcome = probability`` (by the file extension ``.toml``).

    Probabilities are numbers or fraction strings ("1/100"); they must be >= 0 and sum to 1 within
    1e-9; outcomes must be unique; at least two must have positive probability.

    Optional prizes (payout per unit stake of each outcome, a finite number >= 0): a third CSV column
    (header ``outcome,probability,prize``) or a TOML ``[prizes]`` table naming every outcome.  The
    declared return rate is then ``sum(p_k * prize_k)``; ``fit`` ignores prizes.
    """
    path = os.fspath(path)
    if not os.path.exists(path):
        raise InputError("odds file not found", path, "check the path")
    if os.path.isdir(path):
        raise InputError("odds file is a directory", path, "give a CSV or TOML file")
    try:
        with open(path, "rb") as f:
            raw = f.read()
    except OSError as e:
        raise InputError(f"cannot read odds file: {e.strerror}", path) from None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise InputError("odds file is not UTF-8 text", path, "save it as UTF-8") from None
    if path.lower().endswith(".toml"):
        outcomes, probs, prizes = _odds_toml(text, path)
    else:
        outcomes, probs, prizes = _odds_csv(text, path)
    if len(outcomes) < 2:
        raise InputError("an odds declaration needs at least two outcomes", path)
    total = math.fsum(probs)
    if abs(total - 1.0) > SUM_TOL:
        raise InputError(f"probabilities sum to {total!r}, not 1 (tolerance {SUM_TOL:g})", path,
                         "fix the declaration; fractions such as 1/3 avoid rounding")
    if sum(1 for p in probs if p > 0) < 2:
        raise InputError("at least two outcomes need a positive probability", path)
    p = np.asarray(probs, dtype=np.float64)
    return Declaration("odds", f"odds from {os.path.basename(path)}", outcomes=outcomes, probs=p / p.sum(),
                       prizes=None if prizes is None else np.asarray(prizes, dtype=np.float64))


def _parse_prize(text: Any, where: str) -> float:
    """A prize: payout per unit stake, a finite number >= 0 (a fraction string such as "5/2" is accepted)."""
    hint = "write the payout per unit stake, e.g. 2.5 (0 for a losing outcome)"
    if isinstance(text, bool) or (not isinstance(text, (int, float, str))):
        raise InputError(f"prize must be a number, not {text!r}", where, hint)
    s = str(text).strip()
    if any(len(d) > MAX_NUMBER_DIGITS for d in re.findall(r"[0-9_]+", s)):
        raise InputError(f"prize has a number of more than {MAX_NUMBER_DIGITS} digits", where, hint)
    try:
        v = float(Fraction(s)) if "/" in s else float(s)
    except (ValueError, ZeroDivisionError, OverflowError):
        raise InputError(f"cannot read prize {s[:40]!r}", where, hint) from None
    if not math.isfinite(v) or v < 0:
        raise InputError(f"prize {s[:40]!r} is not a finite number >= 0", where, hint)
    return v


def _odds_csv(text: str, path: str) -> tuple[list[str], list[float], list[float] | None]:
    reader = csv.reader(io.StringIO(text, newline=""), strict=True)
    header_seen = False
    width = 2
    prizes: list[float] = []
    seen: dict[str, int] = {}
    outcomes: list[str] = []
    probs: list[float] = []
    try:
        for row in reader:
            line = reader.line_num
            where = f"{path} line {line}"
            if not row or all(not c.strip() for c in row) or row[0].lstrip().startswith("#"):
                continue
            if not header_seen:
                head = [c.strip().lower() for c in row]
                if head not in (["outcome", "probability"], ["outcome", "probability", "prize"]):
                    raise InputError(f"CSV header must be 'outcome,probability' (or 'outcome,probability,prize'), "
                                     f"got {','.join(row)!r}", where, "first line: outcome,probability")
                header_seen = True
                width = len(head)
                continue
            if len(row) != width:
                fields = "outcome, probability" + (", prize" if width == 3 else "")
                raise InputError(f"expected {width} fields ({fields}), got {len(row)}", where,
                                 "one outcome per line: NAME,PROBABILITY" + (",PRIZE" if width == 3 else ""))
            name = row[0].strip()
            if not name:
                raise InputError("empty outcome name", where)
            if any(ch.isspace() for ch in name):
                raise InputError(f"outcome {name!r} contains white space", where,
                                 "outcome labels are matched against white-space separated tokens")
            if name in seen:
                raise InputError(f"duplicate outcome {name!r} (first declared on line {seen[name]})", where)
            seen[name] = line
            outcomes.append(name)
            probs.append(_parse_probability(row[1], where))
            if width == 3:
                prizes.append(_parse_prize(row[2], where))
    except csv.Error as e:
        raise InputError(f"malformed CSV: {e}", f"{path} line {reader.line_num}") from None
    if not header_seen:
        raise InputError("empty odds file", path, "first line: outcome,probability")
    return outcomes, probs, (prizes if width == 3 else None)


def _odds_toml(text: str, path: str) -> tuple[list[str], list[float], list[float] | None]:
    import tomllib

    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as e:
        msg = str(e)
        m = re.search(r"line (\d+)", msg)
        where = f"{path} line {m.group(1)}" if m else path
        raise InputError(f"malformed TOML: {re.sub(r' *[(]at line.*[)]', '', msg)}", where) from None
    table = doc.get("odds")
    if not isinstance(table, dict):
        raise InputError("TOML odds file needs an [odds] table", path, "[odds] then one line per outcome: name = probability")
    lines = text.splitlines()
    outcomes, probs = [], []
    for name, value in table.items():
        if isinstance(value, dict):
            raise InputError(f"outcome {name!r}: nested table where a probability was expected", _toml_where(path, lines, name))
        if any(ch.isspace() for ch in name) or not name:
            raise InputError(f"outcome {name!r} is empty or contains white space", _toml_where(path, lines, name))
        outcomes.append(str(name))
        probs.append(_parse_probability(value, _toml_where(path, lines, name)))
    return outcomes, probs, _prizes_toml(doc, outcomes, path, lines)


def _prizes_toml(doc: dict, outcomes: list[str], path: str, lines: list[str]) -> list[float] | None:
    if "prizes" not in doc:
        return None
    table = doc["prizes"]
    if not isinstance(table, dict):
        raise InputError("'prizes' must be a table", path, "[prizes] then one line per outcome: name = payout per unit stake")
    start = next((i for i, ln in enumerate(lines) if re.match(r"^\s*\[\s*prizes\s*\]", ln)), 0)

    def where(key: str) -> str:  # the key's line inside the [prizes] table
        w = _toml_where(path, lines[start:], key)
        m = re.search(r" line (\d+)$", w)
        return f"{path} line {int(m.group(1)) + start}" if m else path

    unknown = [k for k in table if k not in outcomes]
    if unknown:
        raise InputError(f"[prizes] names outcome {unknown[0]!r}, which [odds] does not declare",
                         where(unknown[0]), "use the outcome names of [odds]")
    missing = [k for k in outcomes if k not in table]
    if missing:
        raise InputError(f"[prizes] gives no prize for outcome {missing[0]!r}", path,
                         "give every outcome a prize (0 for a losing outcome)")
    return [_parse_prize(table[k], where(k)) for k in outcomes]


def _toml_where(path: str, lines: list[str], key: str) -> str:
    pat = re.compile(r'^\s*(?:"' + re.escape(key) + r'"|\'' + re.escape(key) + r"'|" + re.escape(key) + r")\s*=")
    for i, ln in enumerate(lines, 1):
        if pat.match(ln):
            return f"{path} line {i}"
    return path


@dataclass
class Categories:
    """Outcome categories of a discrete declaration: probabilities in a fixed order, labels for the report."""

    labels: list[str]
    probs: np.ndarray  # sums to 1
    cum_lo: np.ndarray  # P(X before the category): F(x - 1) in category order
    index: Callable[[np.ndarray], np.ndarray]  # values -> category index


def categories_for(decl: Declaration) -> Categories:
    """Categories of an odds table (declared order) or of a scipy discrete law (integers from its
    1e-12 quantile to its 1e-12 upper quantile, the rest lumped into 'below' and 'above')."""
    if decl.kind == "odds":
        p = np.asarray(decl.probs, dtype=np.float64)
        cum = np.concatenate([[0.0], np.cumsum(p)[:-1]])
        return Categories(list(decl.outcomes), p, cum, lambda v: np.asarray(v, dtype=np.int64))
    fz = decl.frozen
    from ._common import upper_outcome  # here: numba is imported only when a discrete law is tabled

    with np.errstate(all="ignore"):
        lo = int(max(fz.support()[0], fz.ppf(TABLE_TAIL)))
    hi = upper_outcome(fz, TABLE_TAIL, lo)
    if hi - lo + 1 > MAX_OUTCOMES:
        raise InputError(f"{decl.spec} spreads over {hi - lo + 1} outcomes between its 1e-12 quantiles; "
                         f"at most {MAX_OUTCOMES} are supported", "", "declare a narrower law or bin the outcomes with --odds")
    k = np.arange(lo, hi + 1)
    with np.errstate(all="ignore"):
        pmf = np.asarray(fz.pmf(k), dtype=np.float64)
        below = float(fz.cdf(lo - 1))
        above = float(fz.sf(hi))
        cdf_km1 = np.asarray(fz.cdf(k - 1), dtype=np.float64)
        sf_km1 = np.asarray(fz.sf(k - 1), dtype=np.float64)
    cum_lo = np.where(cdf_km1 < 0.5, cdf_km1, 1.0 - sf_km1)
    labels = [str(int(v)) for v in k]
    probs = [pmf]
    cums = [cum_lo]
    has_below = below > 0
    if has_below:
        labels.insert(0, f"<{lo}")
        probs.insert(0, np.array([below]))
        cums.insert(0, np.array([0.0]))
    if above > 0:
        labels.append(f">{hi}")
        probs.append(np.array([above]))
        cums.append(np.array([1.0 - above]))
    p = np.concatenate(probs)
    off = 1 if has_below else 0
    n_int = hi - lo + 1

    def index(v: np.ndarray) -> np.ndarray:
        v = np.asarray(v, dtype=np.int64)
        idx = v - lo + off
        if has_below:
            idx = np.where(v < lo, 0, idx)
        idx = np.where(v > hi, off + n_int, idx)
        return idx

    return Categories(labels, p / p.sum(), np.concatenate(cums), index)


def discrete_validator(decl: Declaration) -> Callable[[np.ndarray], tuple[int, str, str] | None]:
    """A check of values read for a scipy discrete law: whole numbers the law gives positive
    probability; returns ``(index, what, hint)`` of the first value refused, or None."""
    fz = decl.frozen

    def check(v: np.ndarray):
        frac = v != np.floor(v)
        if frac.any():
            i = int(np.argmax(frac))
            return i, f"{float(v[i])!r} is not a whole number ({decl.spec} is a discrete distribution)", \
                "the data must be integer outcomes"
        uniq = np.unique(v)
        with np.errstate(all="ignore"):
            zero = uniq[np.asarray(fz.pmf(uniq)) <= 0]
        if zero.size:
            i = int(np.flatnonzero(v == zero[0])[0])
            return i, f"outcome {int(v[i])} has probability 0 under {decl.spec}: not among the declared outcomes", \
                "check the declaration or the data"
        return None

    return check
