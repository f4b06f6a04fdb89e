"""Sniffing input given with no --format: printed numbers and hex digits stop with one line naming the format;
random bytes essentially never do; an explicit format turns it off; sniffed bytes are not consumed."""

import hashlib
import io
import sys

import numpy as np
import pytest

from rngassay.errors import InputError
from rngassay.intake.open import open_stream
from rngassay.intake.sniff import MIN_SNIFF_BYTES, SNIFF_ALPHABET, SNIFF_BYTES, sniff
from rngassay.intake.sources import StdinSource
from rngassay.intake.stream import Stream


def test_random_streams_never_trip():
    """(34/256)^32 < 1e-28 per stream (module docstring), so 100,000 streams of random bytes (seed fixed) must give
    no trip: a rule that let in more byte values, or sniffed shorter heads, would fail here."""
    rng = np.random.default_rng(20261203)
    # mostly short heads (the bound is weakest there), some of full sniff length; about 20 MB in all
    lengths = np.concatenate([rng.integers(MIN_SNIFF_BYTES, 257, size=99_000), np.full(1000, SNIFF_BYTES)])
    blob = rng.bytes(int(lengths.sum()))
    pos = 0
    for n in lengths:
        head = blob[pos : pos + n]
        pos += n
        assert sniff(head, complete=n < SNIFF_BYTES) is None, head[:40]


def test_the_stated_bound_counts_every_byte_that_can_trip():
    """The bound's 34 is the size of the alphabet, and no byte outside it can be part of a sniffed head."""
    assert len(SNIFF_ALPHABET) == 34
    heads = [b"00112233445566778899aabbccddeeff\n" * 4, b"0.25 0.5\n0.125 1e-3\n" * 4, b"1 2 3 4 5 6\n" * 8]
    for h in heads:
        assert sniff(h, complete=True) is not None
        for c in range(256):
            if c not in SNIFF_ALPHABET:
                assert sniff(h[:10] + bytes([c]) + h[10:], complete=True) is None, c


@pytest.mark.parametrize("head, kind", [
    (b"3\n1\n6\n6\n2\n5\n4\n1\n1\n3\n2\n6\n5\n5\n4\n3\n2\n", "text-integers"),
    (b"12,7,33,41,8,19,20,3,3,47,11,9,28,2\n", "text-integers"),
    (b"0.8147236863931789\n0.9057919370756192\n0.1269868", "text-floats"),
    (b"8.147236863931789e-01 9.057919370756192e-01\n", "text-floats"),
    (b"-0.25 +0.5 0.125 0.0625 0.75 0.875\n", "text-floats"),
    (b"9f86d081884c7d659a2feaa0c55ad015a3bf4f1b2b0b822cd15d6c15b0f00a08\n", "hex"),
    (b"9F86D081 884C7D65 9A2FEAA0 C55AD015 A3BF4F1B\n", "hex"),
    (b"0x9f86d081 0x884c7d65 0x9a2feaa0 0xc55ad015\n", "hex"),
    (b"0x12345678 0x23456789 0x34567890 0x45678901\n", "hex"),  # digits only, but 0x-prefixed
])
def test_what_is_sniffed(head, kind):
    assert sniff(head, complete=True) == kind


def test_a_head_cut_inside_a_token():
    one_line = (b"9f86d081884c7d659a2feaa0c55ad015" * 200)[:SNIFF_BYTES]  # one long token, cut by the peek
    assert sniff(one_line, complete=False) == "hex"
    assert sniff(b"ab12 cd34 0" * 400, complete=False) == "hex"


@pytest.mark.parametrize("head", [
    b"short 1 2 3",  # under 32 bytes: never sniffed
    b"1 2 3 4 5 6 7 8 9 1 2",
    b" \n" * 40,  # white space only
    b"12 34 56 78 90 12 34 56 78 90 12 34 56 78 90 zz\n",
    b"0.5 0.25 nan 0.125 0.0625 0.03125 0.1\n",
    b"ab cd ef 0xx1 12 34 56 78 90 ab cd ef\n",
])
def test_what_is_not_sniffed(head):
    assert sniff(head, complete=True) is None


def test_file_with_no_format_is_refused_naming_the_format(tmp_path):
    p = tmp_path / "die.txt"
    p.write_text("\n".join(str(x) for x in np.random.default_rng(1).integers(1, 7, 5000)) + "\n")
    with pytest.raises(InputError) as e:
        open_stream(str(p))
    assert "--format text --range LO:HI" in e.value.line() and "die.txt" in e.value.line()
    with pytest.raises(InputError, match="--format text"):
        open_stream(str(p), value_range="1:6")  # --range without --format: the sniff names the format
    with open_stream(str(p), fmt="u1") as s:  # an explicit format turns sniffing off
        assert s.read_values(10).tobytes() == p.read_bytes()[:10]
    with open_stream(str(p), fmt="text", value_range="1:6") as s:
        assert s.read_values(3).tolist() == [int(x) for x in p.read_text().split()[:3]]


def test_hex_file_with_no_format_names_hex(tmp_path):
    p = tmp_path / "h.txt"
    p.write_text(np.random.default_rng(2).bytes(4000).hex())
    with pytest.raises(InputError, match="--format hex"):
        open_stream(str(p))


def test_sniffed_stdin_bytes_are_still_read_and_hashed(monkeypatch):
    """Raw bytes on stdin pass the sniff, and every byte the sniff looked at is read, counted and hashed."""
    data = np.random.default_rng(3).bytes(3 * SNIFF_BYTES + 17)
    monkeypatch.setattr(sys, "stdin", io.TextIOWrapper(io.BufferedReader(io.BytesIO(data))))
    with open_stream("-") as s:
        got = s.read_values(len(data))
        assert got.tobytes() == data
        assert s.bytes_read == len(data)
        assert s.info().sha256 == hashlib.sha256(data).hexdigest()


def test_peek_then_read_in_small_pieces():
    data = bytes(range(256)) * 40
    src = StdinSource(io.BufferedReader(io.BytesIO(data)))
    assert src.peek(100) == data[:100]
    assert src.peek(5000) == data[:5000]
    s = Stream(src, "u1", chunk=77)
    parts = [s.read_values(333).tobytes() for _ in range(40)]
    assert b"".join(parts) == data
    assert s.info().sha256 == hashlib.sha256(data).hexdigest()


def test_text_on_stdin_is_refused(run_cli):
    r = run_cli("test", "-", stdin=b"0.5 0.25 0.125 0.75 0.625 0.875 0.375 0.3\n" * 100)
    assert r.code == 2
    lines = [l for l in r.err.splitlines() if l.strip()]
    assert len(lines) == 1 and "stdin" in lines[0] and "--format text" in lines[0] and "Traceback" not in r.err


def test_explicit_u1_assays_printed_digits_raw(run_cli, tmp_path):
    p = tmp_path / "digits.txt"
    p.write_text("\n".join(str(x) for x in np.random.default_rng(4).integers(0, 10**6, 20000)))
    r = run_cli("test", p, "--format", "u1", "--budget", "64KiB", "--checks", "monobit")
    assert r.code in (0, 1), r.err  # it runs (printed digits are far from uniform bytes, so it fails)
    assert "looks like" not in r.err
