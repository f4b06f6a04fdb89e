"""Declared-distribution conformance: ``rngassay fit SOURCE --dist SPEC | --odds FILE``.

A supplier declares what its variates follow -- a ``scipy.stats`` distribution with its parameters
(``norm(loc=2, scale=3)``, ``poisson(mu=3)``) or a table of outcome probabilities (prize tiers of a
game) -- and hands over a sample.  H0: the values are i.i.d. draws from the declared law.

What runs
---------
Continuous declarations (family ``fit``, on the variates themselves, ``ln F`` and ``ln S`` from
``scipy.stats`` ``logcdf``/``logsf`` so both tails keep their precision):

* ``anderson-darling`` -- A² against the declared F (Anderson & Darling 1954; p-value by
  :func:`rngassay.stats.ad_pvalue`).
* ``tail count q=.. side=..`` -- the number of values below the declared q-quantile / above the
  (1 - q)-quantile for q in 1e-3, 1e-5, 1e-7 (each when n q >= 1): exactly Binomial(n, q) under H0;
  both tails (too few extreme values = truncated or clipped tails, too many = heavy tails).
* ``extreme value`` -- the smallest tail area ``T = min_i min(F(x_i), S(x_i))``: under H0
  ``P(T <= t) = 1 - (1 - 2t)^n`` exactly.  Right tail: a value far too extreme (or outside the
  support); left tail: the sample never reaches the tails it should (truncation).

Discrete declarations (a ``scipy.stats`` discrete law, or ``--odds``):

* ``outcome frequencies`` -- Pearson chi-square on the outcome counts, rare cells pooled to
  expected >= 5 (:func:`rngassay.stats.chisquare_gof`), or the exact multinomial p-value when an
  expected count is below 5 and enumeration is feasible; the G statistic is in the details.
* ``outcome deviation`` -- each outcome's count against its exact Binomial(n, p) law, two-sided;
  the smallest p-value times the number of outcomes (Bonferroni).  The focused test a regulator
  asks for ("is the 1-in-100 prize paid 1 time in 100?"), far more powerful than the omnibus test
  against one mis-stated probability.
* ``serial d=2`` / ``serial d=3`` -- Good's first-difference serial statistic on overlapping pairs /
  triples of the outcome sequence, with the declared (unequal) outcome probabilities
  (:func:`rngassay.checks.classic.serial.first_difference`, as in the categorical serial check);
  outcomes are merged into groups of probability >= (5/n)^(1/d) (at most 64 / 16 groups) so every
  cell expects >= 5.  Both tails.

The PIT battery
---------------
The values are mapped to uniforms by the probability integral transform -- ``u = F(x)`` below the
median and ``1 - S(x)`` above it; for discrete laws the randomised PIT ``u = F(x-1) + V P(x)`` with
``V`` uniform from a ``numpy`` PCG64 generator seeded with ``pit_seed`` (recorded in the report
settings) -- and the whole uniform battery runs on them (``assay_stream``), testing independence
as well as fit.  Their checks appear with ids prefixed ``pit: ``.  A PIT value that rounds to 1.0
is stored as the largest double below 1 (the far-tail checks above see the exact value).  Text and
``<f4`` variates are rounded, so their PIT values repeat by construction: the ``float resolution``
check is left out of the PIT battery for them (and said so in the notes).

Grading: Holm's step-down over all checks together (fit-specific and PIT battery) at ``alpha``,
the same grades and verdict rules as ``rngassay test`` (:mod:`rngassay.battery.grade`).
"""

from __future__ import annotations

import ast
import csv
import hashlib
import io
import math
import os
import re
import time
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any, Callable

import numpy as np

from .checks.result import CheckResult
from .errors import InputError
from .intake.formats import MAX_TOKEN_BYTES
from .intake.views import decimal_grid  # noqa: F401  (also re-exported for callers of fitting)

#: bytes that never belong to a number token (in numeric mode): '_' and anything outside printable ASCII
_NOT_A_NUMBER_BYTE = re.compile(rb"[_\x80-\xff]")
from .model import CAUTIONS, NO_VERDICT, CheckReport, Report, Round

#: Default seed of the randomised PIT (discrete declarations).
DEFAULT_PIT_SEED = 20240917
#: Most values read from a source (the rest is left unread and the report says so).
MAX_VALUES = 1 << 25
#: Sum of declared probabilities must be 1 within this.
SUM_TOL = 1e-9
#: Tail levels of the continuous tail counts; a level runs when n q >= 1.
FIT_TAIL_LEVELS = (1e-3, 1e-5, 1e-7)
#: Discrete tables: outcomes beyond the declared 1e-12 tails are lumped.
TABLE_TAIL = 1e-12
MAX_OUTCOMES = 1_000_000
#: Serial tests on outcomes: most groups for d = 2 and d = 3.
SERIAL_MAX_GROUPS = {2: 64, 3: 16}
_READ_CHUNK = 1 << 20
_FORMATS = ("text", "<f8", "<f4", ">f8", ">f4")

FIT_CAUTIONS = [
    "A pass is evidence of conformance to the declared distribution at the sample size used, "
    "not a certification.",
    CAUTIONS[1],
    "For gaming, defer to the jurisdiction's technical standards and accredited test laboratories.",
]


# =========================================================================== declarations


@dataclass
class Declaration:
    """What the supplier declares: a frozen scipy law (continuous/discrete) or an odds table."""

    kind: str  # "continuous", "discrete" or "odds"
    spec: str  # normalised description, e.g. "norm(loc=2, scale=3)" or "odds from tiers.csv"
    frozen: Any = None
    outcomes: list[str] = field(default_factory=list)  # odds: outcome labels in declared order
    probs: np.ndarray | None = None  # odds: probabilities (normalised to sum 1)


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
        outcomes, probs = _odds_toml(text, path)
    else:
        outcomes, probs = _odds_csv(text, path)
    if len(outcomes) < 2:
        raise InputError("an odds declaration needs at least two outcomes", path)
    total = math.fsum(probs)
    if abs(total - 1.0) > SUM_TOL:
        raise InputError(f"probabilities sum to {total!r}, not 1 (tolerance {SUM_TOL:g})", path,
                         "fix the declaration; fractions such as 1/3 avoid rounding")
    if sum(1 for p in probs if p > 0) < 2:
        raise InputError("at least two outcomes need a positive probability", path)
    p = np.asarray(probs, dtype=np.float64)
    return Declaration("odds", f"odds from {os.path.basename(path)}", outcomes=outcomes, probs=p / p.sum())


def _odds_csv(text: str, path: str) -> tuple[list[str], list[float]]:
    reader = csv.reader(io.StringIO(text, newline=""), strict=True)
    header_seen = False
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
                if head != ["outcome", "probability"]:
                    raise InputError(f"CSV header must be 'outcome,probability', got {','.join(row)!r}", where,
                                     "first line: outcome,probability")
                header_seen = True
                continue
            if len(row) != 2:
                raise InputError(f"expected 2 fields (outcome, probability), got {len(row)}", where,
                                 "one outcome per line: NAME,PROBABILITY")
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
    except csv.Error as e:
        raise InputError(f"malformed CSV: {e}", f"{path} line {reader.line_num}") from None
    if not header_seen:
        raise InputError("empty odds file", path, "first line: outcome,probability")
    return outcomes, probs


def _odds_toml(text: str, path: str) -> tuple[list[str], list[float]]:
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
    return outcomes, probs


def _toml_where(path: str, lines: list[str], key: str) -> str:
    pat = re.compile(r'^\s*(?:"' + re.escape(key) + r'"|\'' + re.escape(key) + r"'|" + re.escape(key) + r")\s*=")
    for i, ln in enumerate(lines, 1):
        if pat.match(ln):
            return f"{path} line {i}"
    return path


# =========================================================================== reading variates


@dataclass
class Variates:
    values: np.ndarray  # float64 (continuous), int64 (discrete integers or outcome indices)
    source: dict[str, Any]  # kind, name, format, bytes_read, sha256, values
    truncated: bool = False


Validator = Callable[["np.ndarray"], "tuple[int, str, str] | None"]


class _TextParser:
    """Incremental parser of white-space separated tokens with line numbers for errors."""

    def __init__(self, where: str, mode: str, labels: dict[bytes, int] | None, validate: Validator | None):
        self.where, self.mode, self.labels, self.validate = where, mode, labels, validate
        self.carry = b""
        self.line = 1

    def feed(self, chunk: bytes, final: bool = False) -> np.ndarray:
        buf = self.carry + chunk if self.carry else chunk
        if final:
            body, self.carry = buf, b""
        else:
            cut = max(buf.rfind(c) for c in (b" ", b"\n", b"\t", b"\r", b"\f", b"\v"))
            if cut < 0:
                if len(buf) > MAX_TOKEN_BYTES:  # e.g. /dev/zero: refused, not buffered without end
                    raise InputError(f"no white space in {len(buf)} bytes of text: no value is that long",
                                     f"{self.where} line {self.line}",
                                     "values must be separated by white space or newlines; check --format")
                self.carry = bytes(buf)
                return np.empty(0)
            body, self.carry = buf[: cut + 1], bytes(buf[cut + 1:])
        out = self._parse(body)
        self.line += body.count(b"\n")
        return out

    def _line_of(self, body: bytes, index: int) -> int:
        for j, m in enumerate(re.finditer(rb"\S+", body)):
            if j == index:
                return self.line + body.count(b"\n", 0, m.start())
        return self.line  # pragma: no cover

    def _parse(self, body: bytes) -> np.ndarray:
        tokens = body.split()
        if not tokens:
            return np.empty(0)
        if self.mode == "labels":
            assert self.labels is not None
            uniq, inv = np.unique(np.array(tokens), return_inverse=True)  # fixed-width bytes: sorted in C
            codes = np.empty(uniq.size, dtype=np.int64)
            for j, tok in enumerate(uniq.tolist()):  # loop over distinct labels, not over values
                c = self.labels.get(tok)
                if c is None:
                    i = int(np.flatnonzero(inv == j)[0])
                    shown = tok[:40].decode("utf-8", "replace")
                    raise InputError(f"outcome {shown!r} is not in the odds declaration",
                                     f"{self.where} line {self._line_of(body, i)}",
                                     "every outcome in the data must be declared (labels are matched exactly)")
                codes[j] = c
            vals = codes[inv.ravel()]
        else:
            odd = _NOT_A_NUMBER_BYTE.search(body)
            if odd:  # float() also takes '_' between digits and non-ASCII digits; a sampler writes neither
                i = next(j for j, m in enumerate(re.finditer(rb"\S+", body)) if m.end() > odd.start())
                shown = tokens[i][:40].decode("utf-8", "replace")
                raise InputError(f"cannot read {shown!r} as a number: only ASCII digits, '.', 'e' and a sign are read",
                                 f"{self.where} line {self._line_of(body, i)}", "write plain decimal numbers")
            try:
                vals = np.array(tokens, dtype=np.float64)
            except (ValueError, OverflowError):
                for i, tok in enumerate(tokens):  # only on error: find the bad token
                    try:
                        float(tok)
                    except ValueError:
                        shown = tok[:40].decode("utf-8", "replace")
                        raise InputError(f"cannot read {shown!r} as a number", f"{self.where} line {self._line_of(body, i)}",
                                         "the data must be numbers separated by white space") from None
                raise InputError("unreadable text", f"{self.where} line {self.line}") from None
            bad = ~np.isfinite(vals)
            if bad.any():
                i = int(np.argmax(bad))
                shown = tokens[i][:40].decode("utf-8", "replace")
                raise InputError(f"{'NaN' if np.isnan(vals[i]) else 'infinite value'} ({shown!r}) in the data",
                                 f"{self.where} line {self._line_of(body, i)}",
                                 "remove it: a sampler must produce finite numbers")
        if self.validate is not None:
            res = self.validate(vals)
            if res is not None:
                i, what, hint = res
                raise InputError(what, f"{self.where} line {self._line_of(body, i)}", hint)
        return vals


def read_variates(
    source: Any = None,
    *,
    fmt: str = "text",
    mode: str = "numbers",
    labels: list[str] | None = None,
    validate: Validator | None = None,
    command: str | None = None,
    shell: bool = False,
    limit: int | None = None,
) -> Variates:
    """Read a supplier's values from a file path, ``"-"`` (standard input) or ``command``.

    ``fmt``: ``text`` (numbers or labels separated by white space, any number per line), or
    ``<f8``/``<f4`` (``>f8``/``>f4``) binary floats.  ``mode``: ``numbers`` (finite floats),
    ``labels`` (tokens matched exactly against ``labels``; text only).  NaN and infinities are
    rejected with file:line (text) or byte offset (binary); ``validate(values_chunk)`` may reject a
    value by returning ``(index, what, hint)``.  At most ``limit`` values (default and ceiling
    :data:`MAX_VALUES`) are read.
    """
    from .intake.sources import RawSource, open_source

    if fmt not in _FORMATS:
        raise InputError(f"unknown format {fmt!r} for fit", "", "use text, <f8 or <f4")
    if mode == "labels" and fmt != "text":
        raise InputError("outcome labels need --format text", "", "write one label per value, separated by white space")
    if limit is not None and limit < 1:
        raise InputError(f"--limit must be at least 1, got {limit}", "", "e.g. --limit 100000")
    cap = min(limit, MAX_VALUES) if limit is not None else MAX_VALUES
    raw = source if isinstance(source, RawSource) else open_source(
        None if source is None else os.fspath(source), command=command, shell=shell)
    sha = hashlib.sha256()
    nbytes = 0
    parts: list[np.ndarray] = []
    have = 0
    truncated = False
    try:
        if fmt == "text":
            lab = {s.encode("utf-8"): i for i, s in enumerate(labels)} if labels is not None else None
            parser = _TextParser(raw.where, mode, lab, validate)
            while have < cap:
                chunk = raw.read(_READ_CHUNK)
                if chunk:
                    sha.update(chunk)
                    nbytes += len(chunk)
                vals = parser.feed(chunk, final=not chunk)
                if vals.size:
                    parts.append(vals)
                    have += vals.size
                if not chunk:
                    break
            else:
                truncated = bool(raw.read(1)) or bool(parser.carry.strip())
        else:
            dt = np.dtype(fmt)
            size = dt.itemsize
            carry = b""
            while have < cap:
                chunk = raw.read(min(_READ_CHUNK, (cap - have) * size + size))
                if not chunk:
                    break
                sha.update(chunk)
                offset = nbytes - len(carry)
                nbytes += len(chunk)
                buf = carry + chunk
                whole = len(buf) - len(buf) % size
                carry = buf[whole:]
                v = np.frombuffer(buf[:whole], dtype=dt).astype(np.float64)
                bad = ~np.isfinite(v)
                if bad.any():
                    i = int(np.argmax(bad))
                    raise InputError(f"{'NaN' if np.isnan(v[i]) else 'infinite value'} in the data",
                                     f"{raw.where} byte offset {offset + i * size}",
                                     "remove it: a sampler must produce finite numbers")
                if validate is not None:
                    res = validate(v)
                    if res is not None:
                        i, what, hint = res
                        raise InputError(what, f"{raw.where} byte offset {offset + i * size}", hint)
                parts.append(v)
                have += v.size
            if have >= cap:
                truncated = bool(carry) or bool(raw.read(1))
            elif carry:
                raise InputError(f"stream length {nbytes} bytes is not a whole number of {size}-byte values",
                                 f"{raw.where} byte offset {nbytes - len(carry)}",
                                 "check --format, or trim the stream to whole values")
    finally:
        raw.close()
    values = np.concatenate(parts) if parts else np.empty(0)
    if values.size > cap:
        values = values[:cap]
        truncated = True
    if values.size == 0:
        raise InputError("no values in the data", raw.where, "check the source and --format")
    info = {"kind": raw.kind, "name": raw.name, "format": fmt, "bytes_read": nbytes, "sha256": sha.hexdigest(),
            "values": int(values.size)}
    return Variates(values, info, truncated)


# =========================================================================== fit-specific checks


@dataclass
class FitCheck:
    key: str
    params: dict[str, Any]
    title: str
    result: CheckResult
    both_tails: bool

    @property
    def id(self) -> str:
        from .checks.registry import check_id

        return check_id(self.key, self.params)

    @property
    def p(self) -> float:
        """The check's p-value: two-sided (doubled smaller tail) where both tails count."""
        from .stats import clip_p

        r = self.result
        if self.both_tails and r.p_left is not None:
            return clip_p(min(1.0, 2.0 * min(r.p_value, r.p_left)))
        return clip_p(r.p_value)


def tail_log_areas(frozen, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(ln F(x), ln S(x)) of the declared law: ``logcdf``/``logsf``, each accurate in its own tail."""
    with np.errstate(all="ignore"):
        return np.asarray(frozen.logcdf(x), dtype=np.float64), np.asarray(frozen.logsf(x), dtype=np.float64)


def tail_count_check(log_area: np.ndarray, q: float, side: str) -> FitCheck:
    """#{F(x) < q} (side lower, from ln F) or #{S(x) < q} (upper, from ln S): Binomial(n, q) under H0.

    Exact binomial tails, both meaningful (``rngassay.stats.binomial_tails``).
    """
    from .stats import binomial_tails

    n = int(log_area.size)
    k = int(np.count_nonzero(log_area < math.log(q)))
    right, left = binomial_tails(k, n, q)
    r = CheckResult(name="", statistic=float(k), p_value=right, p_left=left, null=f"binomial(n={n}, p={q:g})",
                    kind="discrete", n=n, details={"expected": n * q, "observed": k})
    return FitCheck("tail count", {"q": q, "side": side}, f"count beyond the declared {side} {q:g} quantile", r, True)


def extreme_value_check(log_f: np.ndarray, log_s: np.ndarray) -> FitCheck:
    """Smallest tail area T = min_i min(F(x_i), S(x_i)); H0: P(T <= t) = 1 - (1 - 2t)^n exactly.

    Right tail P(T <= t): a value too extreme; left tail P(T >= t) = (1 - 2t)^n: the sample does
    not reach the tails it should.  Computed in log space (t may be far below the double range).
    """
    from .stats import clip_p

    n = int(log_f.size)
    lt = float(min(np.min(log_f), np.min(log_s)))
    outside = int(np.count_nonzero(np.isneginf(log_f) | np.isneginf(log_s)))
    if lt == -math.inf:
        right, left = 0.0, 1.0
    else:
        t2 = 2.0 * math.exp(lt) if lt > -745 else 0.0
        if t2 == 0.0:  # 1 - (1 - 2t)^n ~ 2 n t
            log_right = math.log(2.0 * n) + lt
            right = math.exp(log_right) if log_right > -745 else 0.0
            left = 1.0
        else:
            lg = n * math.log1p(-min(t2, 1.0)) if t2 < 1.0 else -math.inf
            right = -math.expm1(lg)
            left = math.exp(lg)
    stat = lt / math.log(10.0) if lt > -math.inf else -math.inf
    r = CheckResult(name="", statistic=float(stat), p_value=clip_p(right),
                    p_left=clip_p(left), null=f"min tail area of n={n} (P(T <= t) = 1 - (1 - 2t)^n)",
                    kind="continuous", n=n,
                    details={"log10_smallest_tail_area": stat if math.isfinite(stat) else None,
                             "outside_support": outside})
    return FitCheck("extreme value", {}, "most extreme value against its exact law", r, True)


def anderson_darling_check(log_f: np.ndarray, log_s: np.ndarray) -> FitCheck:
    """A² of the variates against the declared F from sorted ln F and ln S (values outside the
    support, where one of them is -inf, are left out and counted; the extreme-value check judges them)."""
    from .checks.transform._common import ad_from_logs
    from .stats import ad_pvalue

    ok = np.isfinite(log_f) & np.isfinite(log_s)
    lf = np.sort(log_f[ok])
    ls = np.sort(log_s[ok])[::-1]
    kept = int(lf.size)
    if kept < 2:
        raise InputError("anderson-darling needs at least two values inside the declared support")
    a2 = ad_from_logs(lf, ls)
    r = CheckResult(name="", statistic=a2, p_value=ad_pvalue(a2, kept), null=f"anderson-darling A2 (n={kept})",
                    kind="continuous", n=kept, details={"left_out": int(log_f.size - kept)})
    return FitCheck("anderson-darling", {}, "Anderson-Darling test against the declared distribution", r, False)


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
    from .checks.transform._common import upper_outcome

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


def outcome_frequency_check(counts: np.ndarray, probs: np.ndarray) -> FitCheck:
    """Pearson chi-square (pooled to expected >= 5) or the exact multinomial p-value for small counts."""
    from .stats import EXACT_MULTINOMIAL_MAX_OUTCOMES, chisquare_gof, exact_multinomial_p, g_test

    n = int(counts.sum())
    k = int(counts.size)
    expected = n * probs
    details: dict[str, Any] = {"outcomes": k}
    small = bool(np.any((expected < 5) & (probs > 0)))
    feasible = math.comb(n + k - 1, k - 1) <= EXACT_MULTINOMIAL_MAX_OUTCOMES
    if small and feasible:
        p = exact_multinomial_p(counts, probs)
        pos = expected > 0
        x2 = float(np.sum((counts[pos] - expected[pos]) ** 2 / expected[pos]))
        r = CheckResult(name="", statistic=x2, p_value=p, null=f"exact multinomial(n={n}, k={k})", kind="discrete",
                        n=n, details={**details, "method": "exact multinomial"})
        return FitCheck("outcome frequencies", {}, "frequencies of the declared outcomes", r, False)
    try:
        res = chisquare_gof(counts, probs=probs, min_expected=5.0)
        g = g_test(counts, probs=probs, min_expected=5.0)
    except ValueError as e:
        raise InputError(f"outcome frequencies: {e}", "", "use more data") from None
    details.update({"method": "pearson chi-square", "pooled_cells": len(res.pooled_bins), "df": res.df,
                    "g_statistic": float(g.statistic), "g_p_value": float(g.p_value)})
    r = CheckResult(name="", statistic=res.statistic, p_value=res.p_value, p_left=res.p_left,
                    null=f"chi2(df={res.df})", kind="continuous", n=n, details=details)
    return FitCheck("outcome frequencies", {}, "frequencies of the declared outcomes", r, True)


def outcome_deviation_check(counts: np.ndarray, probs: np.ndarray, labels: list[str]) -> FitCheck:
    """Each outcome's count against Binomial(n, p_j), two-sided (doubled smaller tail); Bonferroni
    over the outcomes of positive probability.  Outcomes of zero probability that occur give P_FLOOR."""
    from scipy import stats as sstats

    from .stats import P_FLOOR, clip_p

    n = int(counts.sum())
    c = counts.astype(np.float64)
    pos = probs > 0
    with np.errstate(all="ignore"):
        right = np.where(c > 0, sstats.binom.sf(c - 1, n, probs), 1.0)
        left = sstats.binom.cdf(c, n, probs)
    two = np.minimum(1.0, 2.0 * np.minimum(right, left))
    two = np.where(pos, two, np.where(c > 0, 0.0, 1.0))
    m = max(1, int(pos.sum()))
    j = int(np.argmin(two))
    pmin = float(two[j])
    p = clip_p(min(1.0, m * max(pmin, 0.0))) if pmin > 0 else P_FLOOR
    r = CheckResult(name="", statistic=float(pmin), p_value=p, null=f"Bonferroni over {m} exact binomial tests",
                    kind="discrete", n=n,
                    details={"outcome": labels[j], "observed": int(counts[j]), "expected": float(n * probs[j]),
                             "probability": float(probs[j]), "p_two_sided": pmin})
    return FitCheck("outcome deviation", {}, "largest deviation of one outcome from its declared probability", r, False)


def serial_groups(probs: np.ndarray, n: int, d: int) -> tuple[np.ndarray, np.ndarray] | None:
    """Merge outcomes (largest probability first) into groups of probability >= max((5/n)^(1/d),
    1/max_groups); returns (group of each outcome, group probabilities) or None with < 2 groups."""
    tau = max((5.0 / n) ** (1.0 / d), 1.0 / SERIAL_MAX_GROUPS[d])
    order = np.argsort(-probs, kind="stable")
    group = np.empty(probs.size, dtype=np.int64)
    gp: list[float] = []
    acc, open_members = 0.0, 0
    for j in order.tolist():  # loop over outcomes (categories), not over data values
        group[j] = len(gp)
        acc += float(probs[j])
        open_members += 1
        if acc >= tau:
            gp.append(acc)
            acc, open_members = 0.0, 0
    if open_members:  # the last, too small group joins the one before it
        if gp:
            group[group == len(gp)] = len(gp) - 1
            gp[-1] += acc
        else:
            gp.append(acc)
    gprobs = np.asarray(gp, dtype=np.float64)
    if gprobs.size < 2:
        return None
    return group, gprobs / gprobs.sum()


def serial_check(idx: np.ndarray, probs: np.ndarray, d: int) -> FitCheck | None:
    """Good's first-difference serial statistic on overlapping d-tuples of outcome groups with the
    declared group probabilities; chi-square g^d - g^(d-1) d.o.f.; both tails.  None when < 2 groups."""
    from .checks.classic.serial import first_difference, overlapping_counts
    from .stats import chi2_tails

    n = int(idx.size)
    gg = serial_groups(probs, n, d)
    if gg is None or n < d + 1:
        return None
    group, gprobs = gg
    g = int(gprobs.size)
    sym = group[idx].astype(np.int32)
    counts = overlapping_counts(sym, d, g)
    delta, s_d, s_d1 = first_difference(counts, g, n, gprobs)
    df = g**d - g ** (d - 1)
    right, left = chi2_tails(delta, df)
    r = CheckResult(name="", statistic=float(delta), p_value=right, p_left=left, null=f"chi2(df={df})", n=n,
                    details={"groups": g, "cells": g**d, "min_expected_per_cell": float(n * gprobs.min() ** d),
                             "psi2_d": s_d, "psi2_d_minus_1": s_d1})
    return FitCheck("serial", {"d": d}, f"serial test on overlapping {'pairs' if d == 2 else 'triples'} of outcomes",
                    r, True)


# =========================================================================== PIT


def continuous_pit(log_f: np.ndarray, log_s: np.ndarray) -> np.ndarray:
    """u = F(x) where F(x) <= 1/2, else 1 - S(x) (= -expm1(ln S)); values rounding to 1.0 become
    the largest double below 1."""
    with np.errstate(all="ignore"):
        u = np.where(log_f <= math.log(0.5), np.exp(log_f), -np.expm1(log_s))
    np.minimum(u, np.nextafter(1.0, 0.0), out=u)
    np.maximum(u, 0.0, out=u)
    return u


def interval_pit(frozen, x: np.ndarray, decimals: int, seed: int) -> np.ndarray:
    """Randomised PIT for values rounded to ``decimals`` decimals: the true value lies in the cell
    [x - h/2, x + h/2), h = 10^-decimals, so u = F(lo) + V (F(hi) - F(lo)) with V ~ U[0, 1) from numpy's
    PCG64 seeded with ``seed``. Under H0 (a continuous variate from the declared law, then rounded) u is
    exactly U(0, 1) -- the randomised PIT of the discretised variable (common practice)."""
    h = 10.0 ** -decimals
    lf_lo, ls_lo = tail_log_areas(frozen, x - h / 2)
    lf_hi, ls_hi = tail_log_areas(frozen, x + h / 2)
    with np.errstate(all="ignore"):
        lower = lf_hi <= math.log(0.5)
        f_lo = np.where(lower, np.exp(lf_lo), -np.expm1(ls_lo))
        width = np.where(lower, np.exp(lf_hi) - np.exp(lf_lo), np.exp(ls_lo) - np.exp(ls_hi))
    v = np.random.Generator(np.random.PCG64(seed)).random(x.size)
    u = np.nan_to_num(f_lo + v * np.maximum(width, 0.0), nan=0.0)
    np.minimum(u, np.nextafter(1.0, 0.0), out=u)
    np.maximum(u, 0.0, out=u)
    return u


def randomised_pit(idx: np.ndarray, cats: Categories, seed: int) -> np.ndarray:
    """u = F(x - 1) + V P(x), V ~ U[0, 1) from numpy's PCG64 seeded with ``seed``: i.i.d. U(0, 1)
    under H0 (randomised probability integral transform; Brockwell 2007, common practice)."""
    v = np.random.Generator(np.random.PCG64(seed)).random(idx.size)
    u = cats.cum_lo[idx] + v * cats.probs[idx]
    np.minimum(u, np.nextafter(1.0, 0.0), out=u)
    return u


# =========================================================================== selection and the run


def _matches(key: str, cid: str, family: str, patterns: list[str]) -> bool:
    for p in patterns:
        p = p.strip().lower()
        if p and (p in (family, key) or cid.lower() == p or cid.lower().startswith(p + " ")):
            return True
    return False


def _battery_patterns(patterns: list[str] | None) -> list[str] | None:
    """Selectors for the PIT battery: 'pit' = all of it, 'pit: X' = X, plain X = X."""
    if patterns is None:
        return None
    out = []
    for p in patterns:
        s = p.strip()
        low = s.lower()
        if low == "pit":
            out.append("__all__")
        elif low.startswith("pit:"):
            out.append(s[4:].strip())
        else:
            out.append(s)
    return out


def fit(
    source: Any = None,
    *,
    dist: str | None = None,
    odds: str | os.PathLike | None = None,
    fmt: str = "text",
    command: str | None = None,
    shell: bool = False,
    limit: int | None = None,
    checks: list[str] | None = None,
    skip: list[str] | None = None,
    battery: bool = True,
    alpha: float = 1e-3,
    workers: int | None = 1,
    pit_seed: int = DEFAULT_PIT_SEED,
    progress: Callable[[str], None] | None = None,
) -> Report:
    """Test a supplier's sample against its declared distribution (module docstring).

    ``source``: a file path, ``"-"`` (standard input), or the values themselves as a numpy array
    (or give ``command``).  Exactly one of ``dist`` (a scipy.stats spec) and ``odds`` (a CSV/TOML
    odds file) is required.  ``checks``/``skip`` select by key, family ("fit", or the battery's
    families), identifier, ``pit`` (the whole PIT battery) or ``pit: X``.  ``battery=False`` runs
    the fit-specific checks only.  Returns a :class:`~rngassay.model.Report` (command "fit").
    """
    t0 = time.perf_counter()
    if (dist is None) == (odds is None):
        raise InputError("give exactly one of --dist and --odds" if dist is not None else "give --dist SPEC or --odds FILE",
                         "", "--dist for a scipy.stats distribution (e.g. --dist 'norm(loc=0, scale=1)'), "
                         "--odds for a table of outcome probabilities")
    if not 0 < alpha < 1:
        raise InputError(f"--alpha must be between 0 and 1, got {alpha}", "", "e.g. --alpha 0.001")
    decl = parse_dist_spec(dist) if dist is not None else read_odds(odds)  # type: ignore[arg-type]
    if progress:
        progress("reading the values")
    var = _read_for(decl, source, fmt=fmt, command=command, shell=shell, limit=limit)
    return fit_values(var, decl, checks=checks, skip=skip, battery=battery, alpha=alpha, workers=workers,
                      pit_seed=pit_seed, progress=progress, t0=t0)


def _read_for(decl: Declaration, source: Any, **kw: Any) -> Variates:
    if isinstance(source, np.ndarray) or (isinstance(source, (list, tuple)) and not isinstance(source, str)):
        return _array_variates(decl, source)
    if decl.kind == "odds":
        return read_variates(source, mode="labels", labels=decl.outcomes, **kw)
    if decl.kind == "discrete":
        return read_variates(source, mode="numbers", validate=_discrete_validator(decl), **kw)
    return read_variates(source, mode="numbers", **kw)


def _discrete_validator(decl: Declaration) -> Validator:
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


def _array_variates(decl: Declaration, values: Any) -> Variates:
    if decl.kind == "odds":
        arr = np.asarray(values)
        lab = {s: i for i, s in enumerate(decl.outcomes)}
        if arr.dtype.kind in "iu":
            idx = arr.astype(np.int64)
            if idx.size and (idx.min() < 0 or idx.max() >= len(decl.outcomes)):
                raise InputError("outcome index outside the declared outcomes", "array")
        else:
            uniq, inv = np.unique(arr.astype(str), return_inverse=True)
            codes = np.empty(uniq.size, dtype=np.int64)
            for j, s in enumerate(uniq.tolist()):  # distinct labels only
                if s not in lab:
                    raise InputError(f"outcome {s!r} is not in the odds declaration", "array")
                codes[j] = lab[s]
            idx = codes[inv.ravel()]
        vals = idx
        raw = np.ascontiguousarray(idx).tobytes()
    else:
        vals = np.asarray(values, dtype=np.float64).ravel()
        bad = ~np.isfinite(vals)
        if bad.any():
            raise InputError("NaN or infinite value in the data", f"array index {int(np.argmax(bad))}")
        if decl.kind == "discrete":
            res = _discrete_validator(decl)(vals)
            if res is not None:
                raise InputError(res[1], f"array index {res[0]}", res[2])
        raw = np.ascontiguousarray(vals).tobytes()
    if vals.size == 0:
        raise InputError("no values in the data", "array")
    info = {"kind": "python", "name": "array", "format": "array", "bytes_read": len(raw),
            "sha256": hashlib.sha256(raw).hexdigest(), "values": int(vals.size)}
    return Variates(vals, info)


MIN_FIT_VALUES = 50


def fit_values(
    var: Variates,
    decl: Declaration,
    *,
    checks: list[str] | None = None,
    skip: list[str] | None = None,
    battery: bool = True,
    alpha: float = 1e-3,
    workers: int | None = 1,
    pit_seed: int = DEFAULT_PIT_SEED,
    progress: Callable[[str], None] | None = None,
    t0: float | None = None,
) -> Report:
    """Run the fit on values already read (see :func:`fit`)."""
    from .battery import grade as G

    t0 = time.perf_counter() if t0 is None else t0
    x = var.values
    n = int(x.size)
    if n < MIN_FIT_VALUES:
        raise InputError(
            f"too little data: {n} values; a fit needs at least {MIN_FIT_VALUES} to say anything",
            str(var.source.get("name", "")),
            "supply more values",
        )
    notes: list[str] = []
    if var.truncated:
        notes.append(f"only the first {n} values were used (the source had more)")
    fit_checks: list[FitCheck] = []
    settings: dict[str, Any] = {"declaration": decl.spec, "declaration_kind": decl.kind, "values": n}
    if progress:
        progress("fit checks on the values")

    def attempt(what: str, make: Callable[[], FitCheck | None]) -> None:
        """Run one fit check; one that cannot run on this sample is left out with a note."""
        try:
            fc = make()
        except InputError as e:
            notes.append(f"{what} left out: {e.what}")
            return
        if fc is not None:
            fit_checks.append(fc)

    interrupted = False
    try:
        u = _fit_checks(decl, x, n, pit_seed, attempt, fit_checks, settings, notes)
    except KeyboardInterrupt:  # a stop signal (Ctrl-C, SIGTERM, SIGHUP): report what finished
        interrupted, u = True, None
        notes.append(f"incomplete run: interrupted during the fit checks; {len(fit_checks)} finished, the PIT "
                     "battery did not run; the verdict covers only what finished")
    # selection of the fit-specific checks
    fit_checks = [fc for fc in fit_checks
                  if (checks is None or _matches(fc.key, fc.id, "fit", checks))
                  and not (skip and _matches(fc.key, fc.id, "fit", skip))]
    nbytes = int(var.source.get("bytes_read", 0))
    reports = [_fit_report(fc, nbytes) for fc in fit_checks]
    plan_items = [{"id": fc.id, "key": fc.key, "family": "fit", "view": "variates", "params": fc.params,
                   "values": n, "bytes": nbytes, "replicates": 1} for fc in fit_checks]
    incomplete = interrupted
    # the uniform battery on the PIT values
    if battery and not interrupted:
        pit_rep = _pit_battery(u, decl, var, checks, skip, alpha, workers, progress, notes)
        if pit_rep is not None:
            incomplete = incomplete or pit_rep.incomplete  # an interrupted PIT battery makes the fit incomplete
            for c in pit_rep.checks:
                c.id = f"pit: {c.id}"
            reports.extend(pit_rep.checks)
            plan_items.extend({**item, "id": f"pit: {item['id']}"} for item in pit_rep.plan)
            # the battery's "left out ..." notes keep their prefix (renderers list them apart)
            notes.extend(f"left out pit: {s[len('left out '):]}" if s.startswith("left out ") else
                         (s if s.startswith("incomplete run: ") else f"PIT battery: {s}") for s in pit_rep.notes)
            settings["pit_battery"] = {k: pit_rep.settings.get(k) for k in ("segments", "shared_segments")}
            settings["pit_battery"]["bytes"] = pit_rep.budget_bytes
    elif not battery:
        notes.append("the uniform battery on the PIT values was not run (fit-specific checks only)")
    if not reports and not interrupted:
        raise InputError("no check matched the selection", "", "see the check names in a full run, or drop --checks/--skip")
    from .battery.run import defer_signals

    defer_signals()  # a later stop signal is recorded, not raised: grading and the reports run to the end
    # Holm across everything
    graded = [c for c in reports if c.error is None]
    grades, adj = G.holm_grades([c.p_value for c in graded], alpha)
    for c, g, a in zip(graded, grades, adj):
        c.grade, c.adjusted_p = g, a
    for c in reports:
        if c.error is not None:
            c.grade, c.adjusted_p = "fail", None
    settings.update({"alpha": alpha, "multiple_testing": "Holm over fit and PIT battery checks together",
                     "borderline_factor": G.BORDERLINE_FACTOR, "workers_used": workers})
    return Report(
        command="fit", source=var.source, budget_bytes=nbytes, alpha=alpha,
        verdict=G.run_verdict([c.grade for c in reports]) if reports else NO_VERDICT,
        combined_p=G.combined_p([c.p_value for c in graded]), checks=reports, incomplete=incomplete,
        elapsed_s=time.perf_counter() - t0, plan=plan_items, settings=settings, notes=notes,
        cautions=list(FIT_CAUTIONS),
    )


def _fit_checks(decl, x, n, pit_seed, attempt, fit_checks, settings, notes) -> np.ndarray:
    """The fit-specific checks (appended to ``fit_checks``) and the PIT values for the battery."""
    if decl.kind == "continuous":
        lf, ls = tail_log_areas(decl.frozen, x)
        attempt("anderson-darling", lambda: anderson_darling_check(lf, ls))
        for q in FIT_TAIL_LEVELS:
            if n * q >= 1.0:
                fit_checks.append(tail_count_check(lf, q, "lower"))
                fit_checks.append(tail_count_check(ls, q, "upper"))
        fit_checks.append(extreme_value_check(lf, ls))
        decimals = decimal_grid(x, max_decimals=8)
        if decimals is not None:
            # rounded values: a plain PIT would put the uniforms on a grid the battery then detects
            u = interval_pit(decl.frozen, x, decimals, pit_seed)
            settings["pit"] = (f"randomised interval PIT for values rounded to {decimals} decimals: "
                               "u = F(x - h/2) + V (F(x + h/2) - F(x - h/2)), h = 10^-decimals")
            settings["pit_seed"] = int(pit_seed)
            notes.append(f"the values lie on a grid of 10^-{decimals}: the PIT battery sees a randomised "
                         "interval PIT (seed recorded); the fit-specific checks see the values as given")
        else:
            u = continuous_pit(lf, ls)
            settings["pit"] = "probability integral transform u = F(x) (1 - S(x) in the upper half)"
        del lf, ls
    else:
        cats = categories_for(decl)
        idx = cats.index(x) if decl.kind == "discrete" else np.asarray(x, dtype=np.int64)
        counts = np.bincount(idx, minlength=len(cats.labels))
        attempt("outcome frequencies", lambda: outcome_frequency_check(counts, cats.probs))
        fit_checks.append(outcome_deviation_check(counts, cats.probs, cats.labels))
        for d in (2, 3):
            attempt(f"serial d={d}", lambda d=d: serial_check(idx, cats.probs, d))
        u = randomised_pit(idx, cats, pit_seed)
        settings["pit"] = "randomised probability integral transform u = F(x-1) + V P(x)"
        settings["pit_seed"] = int(pit_seed)
        settings["outcomes"] = len(cats.labels)
    return u


def _fit_report(fc: FitCheck, nbytes: int) -> CheckReport:
    r = fc.result
    p = fc.p
    sl = {"method": "one sample (no replicates)", "p_right": r.p_value, "p_left": r.p_left,
          "details": _jsonable(r.details)}
    stat = r.statistic if math.isfinite(r.statistic) else None
    return CheckReport(
        id=fc.id, key=fc.key, family="fit", params=dict(fc.params), view="variates", kind=r.kind,
        statistic=stat, p_value=p, grade="pass", bytes=nbytes, replicates=1, adjusted_p=None, second_level=sl,
        rounds=[Round(replicates=1, bytes=nbytes, p_value=p, replicate_p=[p], statistic=stat, second_level={})],
        null=r.null, title=fc.title,
    )


def _jsonable(d: dict[str, Any]) -> dict[str, Any]:
    out = {}
    for k, v in d.items():
        if isinstance(v, (np.integer,)):
            v = int(v)
        elif isinstance(v, (np.floating,)):
            v = float(v)
        if isinstance(v, float) and not math.isfinite(v):
            v = None
        out[k] = v
    return out


def _pit_battery(u, decl, var, checks, skip, alpha, workers, progress, notes) -> Report | None:
    from .api import assay_stream, stream_from_array
    from .battery.plan import make_plan
    from .intake.formats import parse_format

    bsel = _battery_patterns(checks)
    bskip = _battery_patterns(skip) or []
    if bsel is not None and "__all__" in bsel:
        bsel = None
    if "__all__" in bskip:
        notes.append("the uniform battery on the PIT values was skipped (--skip pit)")
        return None
    fmt = str(var.source.get("format"))
    if decl.kind == "continuous" and fmt not in ("<f8", ">f8", "array"):
        bskip = bskip + ["float resolution"]
        notes.append(f"PIT battery: float resolution left out: {fmt} variates are rounded, so their PIT values "
                     "repeat by construction")
    try:  # planning is cheap: find out first whether any battery check is selected and can run
        make_plan(parse_format("<f8"), 8 * int(u.size), shared=True, checks=bsel, skip=bskip or None,
                  strict_selectors=False)
    except InputError as e:
        if bsel is not None:
            notes.append("no check of the PIT battery matched the selection")
        else:
            notes.append(f"the uniform battery on the PIT values could not run: {e.what}")
        return None
    stream = stream_from_array(u, "<f8", name=f"PIT values of {var.source.get('name')} under {decl.spec}",
                               kind="derived")
    with stream:
        return assay_stream(stream, checks=bsel, skip=bskip or None, alpha=alpha, workers=workers,
                            retest=False, progress=progress, command="fit", strict_selectors=False,
                            windows=False)  # PIT values' last bits are rounding of F(x), not randomness


# =========================================================================== command line
