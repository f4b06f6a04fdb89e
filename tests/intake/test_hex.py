"""The hex input format: round trips with any white space, case, 0x prefixes and chunk boundaries; errors with byte
offsets; byte accounting (input and decoded bytes); a report on hex text equals the report on the raw bytes."""

import hashlib
import io

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from _chunked import decode_in_pieces
from rngassay.errors import InputError
from rngassay.intake.formats import parse_format
from rngassay.intake.memory import BytesSource
from rngassay.intake.sources import CommandSource, StdinSource
from rngassay.intake.stream import Stream

HEX = parse_format("hex")


def decode(data: bytes, cuts=()) -> bytes:
    return decode_in_pieces(HEX, data, cuts).astype(np.uint8).tobytes()


@st.composite
def hex_texts(draw):
    """Random bytes and one of their many hex spellings: tokens of random (whole-byte) lengths, random case per
    digit, a random 0x/0X prefix per token, random white space between tokens (and before and after)."""
    data = draw(st.binary(max_size=300))
    ws = st.text(alphabet=" \t\n\r\v\f", min_size=1, max_size=3)
    parts = [draw(st.text(alphabet=" \n", max_size=2))]
    i = 0
    while i < len(data):
        k = draw(st.integers(1, 40))
        digits = data[i : i + k].hex()
        digits = "".join(c.upper() if draw(st.booleans()) else c for c in digits)
        prefix = draw(st.sampled_from(["", "", "0x", "0X"]))
        parts.append(prefix + digits)
        parts.append(draw(ws))
        i += k
    if len(parts) > 1 and draw(st.booleans()):
        parts.pop()  # the last token may end at the end of the input
    return data, "".join(parts).encode()


@given(case=hex_texts(), cuts=st.lists(st.integers(0, 2000), max_size=20))
@settings(max_examples=300, deadline=None)
def test_round_trip_any_spelling_any_chunking(case, cuts):
    data, text = case
    assert decode(text, cuts) == data


@given(data=st.binary(max_size=200), cuts=st.lists(st.integers(0, 500), max_size=10))
@settings(max_examples=100, deadline=None)
def test_agrees_with_pythons_bytes_fromhex(data, cuts):
    """Outside reference: Python's bytes.fromhex (which skips white space between bytes) on the same text."""
    text = " ".join(data[i : i + 3].hex().upper() for i in range(0, len(data), 3)).encode()
    assert decode(text, cuts) == bytes.fromhex(text.decode())


@pytest.mark.parametrize("text, offset, needle", [
    (b"0x", 0, "0x with no hex digits"),
    (b"abcd 0x\n12", 5, "0x with no hex digits"),
    (b"abc", 0, "3 digits"),
    (b"ab 0xabc", 3, "3 digits"),
    (b"abcd\n1", 5, "1 digit "),
    (b"abcd efgh", 7, "'g' (0x67) is not a hex digit"),
    (b"\x00\x00\x00", 0, "byte 0x00 is not a hex digit"),
    (b"ab\xffcd", 2, "byte 0xff"),
    (b"a0x1", 2, "'x' where a hex digit"),
    (b"0x0x12", 3, "'x' where a hex digit"),
    (b"x012", 0, "'x' where a hex digit"),
    (b"12 34,56", 5, "',' (0x2c)"),
    (b"ab cd ef 1", 9, "1 digit "),
    (b"0xab 0", 5, "1 digit "),
    (b"ab 123g 45", 6, "'g' (0x67)"),  # the bad character, not the odd count it leaves, is named
])
@pytest.mark.parametrize("chunking", ["whole", "bytewise", "pairs"])
def test_errors_name_the_byte_offset(text, offset, needle, chunking):
    cuts = {"whole": [], "bytewise": list(range(len(text))), "pairs": list(range(0, len(text), 2))}[chunking]
    with pytest.raises(InputError) as e:
        decode(text, cuts)
    assert f"test byte offset {offset}:" in e.value.line(), e.value.line()
    assert needle in e.value.line()
    assert "\n" not in e.value.line()


def test_prefix_split_across_chunks():
    # '0' ends one chunk, 'x' starts the next: a prefix, not a digit (and not an odd token)
    assert decode(b"0x0aff 0Xbb", [1]) == b"\x0a\xff\xbb"
    assert decode(b"0x0aff 0Xbb", [8]) == b"\x0a\xff\xbb"
    assert decode(b"00 0x00", [1, 2, 4]) == b"\x00\x00"
    with pytest.raises(InputError, match="byte offset 0"):
        decode(b"0 x1", [1])


@given(data=st.binary(max_size=300), cuts=st.lists(st.integers(0, 400), max_size=12))
@settings(max_examples=150, deadline=None)
def test_bad_bytes_never_crash(data, cuts):
    try:
        out = decode(data, cuts)
    except InputError as e:
        assert e.line() and "byte offset" in e.line()
    else:
        assert len(out) <= len(data) // 2


def test_one_long_token_streams_in_chunks():
    """A file written as one line of hex (no white space at all) is read chunk by chunk: no token length limit."""
    data = np.random.default_rng(5).bytes(600_000)
    text = b"0x" + data.hex().encode()
    s = Stream(BytesSource("one-line", text), HEX, chunk=65_536)
    got = s.read_values(len(data) + 10)
    assert got.tobytes() == data
    assert s.bytes_read == len(text)


def test_byte_accounting_input_and_decoded():
    data = np.random.default_rng(6).bytes(100_000)
    text = "\n".join(data[i : i + 16].hex() for i in range(0, len(data), 16)).encode() + b"\n"
    s = Stream(BytesSource("lines", text), HEX, chunk=4099)
    got = s.read_values(len(data) + 1)  # asks for more than there is: reads to the end
    assert got.tobytes() == data
    info = s.info().to_dict()
    assert info["bytes_read"] == len(text)
    assert info["decoded_bytes"] == len(data)
    assert info["sha256"] == hashlib.sha256(text).hexdigest()  # the digest covers the text as given
    assert info["format"] == "hex"
    raw = Stream(BytesSource("raw", data), parse_format("u1"))
    raw.read_values(len(data))
    assert "decoded_bytes" not in raw.info().to_dict()


def test_stdin_and_command_sources(tmp_path):
    data = np.random.default_rng(7).bytes(50_000)
    text = " ".join(data[i : i + 7].hex() for i in range(0, len(data), 7)).encode()
    s = Stream(StdinSource(io.BufferedReader(io.BytesIO(text))), HEX, chunk=1000)
    assert s.read_values(len(data)).tobytes() == data
    p = tmp_path / "h.txt"
    p.write_bytes(text)
    with Stream(CommandSource(f"cat {p}"), HEX, chunk=3333) as s:
        assert s.read_values(len(data)).tobytes() == data
        assert s.info().decoded_bytes == len(data)


def test_hex_refuses_range():
    with pytest.raises(InputError, match="--range does not apply to --format hex"):
        parse_format("hex", "1:6")


def test_report_on_hex_equals_report_on_raw_bytes(tmp_path):
    """The decoded bytes are assayed exactly like u1: the same plan, the same statistics and p-values."""
    from rngassay.api import assay

    data = np.random.default_rng(8).bytes(96 * 1024)
    raw = tmp_path / "r.bin"
    raw.write_bytes(data)
    hx = tmp_path / "h.txt"
    hx.write_text("\n".join("0X" + data[i : i + 24].hex().upper() for i in range(0, len(data), 24)) + "\n")
    a = assay(str(raw), workers=1)
    b = assay(str(hx), fmt="hex", workers=1)
    rows_a = [(c.id, c.statistic, c.p_value) for c in a.checks]
    rows_b = [(c.id, c.statistic, c.p_value) for c in b.checks]
    assert len(rows_a) > 20
    assert rows_a == rows_b
    assert a.budget_bytes == b.budget_bytes == len(data)
    assert (a.plan, a.verdict, a.combined_p) == (b.plan, b.verdict, b.combined_p)
    assert b.source["decoded_bytes"] == len(data) and b.source["bytes_read"] == hx.stat().st_size


def test_cli_bad_hex_is_one_line(run_cli, tmp_path):
    p = tmp_path / "bad.txt"
    p.write_bytes(b"00112233 44556677\n8899aabb ccddeefg\n")
    r = run_cli("test", p, "--format", "hex")
    assert r.code == 2
    lines = [l for l in r.err.splitlines() if l.strip()]
    assert len(lines) == 1 and "byte offset 34" in lines[0] and "'g'" in lines[0], r.err
