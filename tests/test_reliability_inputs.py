"""Issue 11, item 4 and the smaller points: hostile inputs that used to give exit 3 (or a hang) give exit 2
with one line, sizes are bounded before allocation, and text numbers are read strictly."""

from __future__ import annotations

import time

import numpy as np
import pytest

from rngassay.battery.cluster import validate_address
from rngassay.errors import InputError
from rngassay.intake.formats import Decoder, parse_format
from rngassay.sizes import MAX_SIZE, parse_size


def _refused(r, *words):
    assert r.code == 2, (r.code, r.err)
    assert r.err.count("\n") == 1 and r.err.startswith("rngassay: "), r.err
    assert "internal error" not in r.err
    for w in words:
        assert w in r.err, r.err


@pytest.fixture
def data(tmp_path):
    p = tmp_path / "v.bin"
    p.write_bytes(np.random.default_rng(3).bytes(1 << 12))
    return p


@pytest.fixture
def die(tmp_path):
    p = tmp_path / "die.txt"
    p.write_text(" ".join(str(v) for v in np.random.default_rng(5).integers(1, 7, 600)) + "\n")
    return p


def test_workers_capped(run_cli, data):
    _refused(run_cli("test", data, "--workers", "99999999999999999999"), "maximum of 256")
    _refused(run_cli("test", data, "--workers", "257"), "maximum of 256")
    _refused(run_cli("seeds", "--gen", "pcg64", "--seeds", "0..3", "--workers", "100000"), "maximum of 256")


def test_cluster_with_workers_says_what_it_does(run_cli, data):
    _refused(run_cli("test", data, "--workers", "2", "--cluster", "tcp://127.0.0.1:8786"),
             "--workers and --cluster", "drop --workers")


def test_cluster_not_an_address_no_hang(run_cli, data):
    t0 = time.monotonic()
    _refused(run_cli("test", data, "--cluster", "not a url"), "not a scheduler address")
    assert time.monotonic() - t0 < 5  # refused from the form alone, no connection tried
    for good in ("tcp://10.0.0.5:8786", "localhost:8786", "tls://[::1]:8786", "inproc://10.0.0.1/123/1"):
        assert validate_address(good) == good
    for bad in ("tcp://host", "http://host:1", "tcp://h:0", "tcp://h:65536", "tcp://a b:1", " "):
        with pytest.raises(InputError):
            validate_address(bad)


def test_budget_bounded_before_allocation(run_cli, data):
    _refused(run_cli("test", "--gen", "pcg64", "--budget", "99999999TiB"), "maximum of 1 PiB")
    _refused(run_cli("test", data, "--budget", "9" * 400), "cannot read --budget")
    assert parse_size("1.5KiB") == 1536 and parse_size("64MiB") == 64 << 20 and parse_size(MAX_SIZE) == MAX_SIZE
    for bad in ("1e5", "\u0661\u0662", "1_0", str(MAX_SIZE + 1)):
        with pytest.raises(InputError):
            parse_size(bad)


def test_dist_hostile_numbers(run_cli, die):
    _refused(run_cli("fit", die, "--dist", f"norm(loc={'1' * 401})"))
    _refused(run_cli("fit", die, "--dist", "-" * 20000 + "1"), "characters long")


def test_pit_seed_negative(run_cli, die):
    _refused(run_cli("fit", die, "--dist", "randint(low=1, high=7)", "--pit-seed", "-1"), "--pit-seed")


@pytest.mark.parametrize("kind", ["csv", "toml"])
def test_odds_with_400_digit_numbers(run_cli, die, tmp_path, kind):
    big = "1" * 400
    p = tmp_path / f"o.{kind}"
    if kind == "csv":
        p.write_text(f"outcome,probability\n1,{big}\n2,0.5\n")
    else:
        p.write_text(f"[odds]\n1 = {big}\n2 = 0.5\n")
    _refused(run_cli("fit", die, "--odds", p), "more than 40 digits", "line 2")


def test_seeds_sizes_bounded(run_cli):
    _refused(run_cli("seeds", "--gen", "pcg64", "--seeds", "0..3", "--bytes-per-seed", "1TiB"), "maximum of 16 MiB")
    _refused(run_cli("seeds", "--gen", "pcg64", "--seeds", "0..3", "--lags", "1000000000"), "--lags")


# -- text numbers (intake/formats.py) -----------------------------------------------------------------------


def _decode(fmt: str, data: bytes, value_range: str | None = None, chunk: int = 1 << 16) -> int:
    d = Decoder(parse_format(fmt, value_range), "t.txt")
    n = 0
    for i in range(0, len(data), chunk):
        n += len(d.feed(data[i:i + chunk]))
    return n + len(d.finish())


def test_long_integer_reported_on_its_own_line():
    # issue 11: a 30-digit integer on line 30001 was reported as "line 1"
    with pytest.raises(InputError) as e:
        _decode("text", b"3\n" * 30000 + b"1" * 30 + b"\n", "1:6")
    assert e.value.where == "t.txt line 30001" and "outside --range" in e.value.what


@pytest.mark.parametrize("tok, words", [
    (b"-0.0", "negative zero"),             # a sign on zero: a formatting bug, not a value in [0, 1)
    (b"1e-400", "underflows"),              # not zero, yet reads as 0.0 in float64
    (b"0.1_5", "'_' digit separators"),     # Python's float() accepts '_'; generators never write it
    ("\u0660.\u0665".encode(), "non-ASCII digits"),  # Arabic-Indic digits: float() reads them too
])
def test_text_numbers_refused(tok, words):
    with pytest.raises(InputError) as e:
        _decode("text", b"0.5 0.25\n" * 2000 + b"0.75 " + tok + b"\n", chunk=1000)
    assert e.value.where == "t.txt line 2001" and words in e.value.what


def test_plain_zeros_and_integers_still_read():
    assert _decode("text", b"0 0.0 .0 0e3 +0.0 0.000 0.5\n") == 7
    assert _decode("text", b"1 2 3 +4 6\n", "1:6") == 5
    with pytest.raises(InputError, match="'_'"):
        _decode("text", b"1 2 1_0\n", "1:6")
