"""Property tests for decoding: round trips for every format, chunks split anywhere, bad bytes never crash."""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from rngassay.errors import InputError
from rngassay.intake.formats import BINARY_FORMATS, Decoder, parse_format


def decode_in_chunks(fmt, data: bytes, cuts: list[int]):
    dec = Decoder(fmt, "test")
    out = []
    prev = 0
    for c in sorted(set(min(c, len(data)) for c in cuts)) + [len(data)]:
        out.append(dec.feed(data[prev:c]))
        prev = c
    out.append(dec.finish())
    return np.concatenate(out) if out else np.empty(0)


cuts_st = st.lists(st.integers(min_value=0, max_value=4000), max_size=12)


@pytest.mark.parametrize("name", [f for f in BINARY_FORMATS if "f" not in f])
@given(data=st.binary(min_size=0, max_size=512), cuts=cuts_st)
@settings(max_examples=60, deadline=None)
def test_word_round_trip_any_chunking(name, data, cuts):
    fmt = parse_format(name)
    data = data[: len(data) - len(data) % fmt.itemsize]
    vals = decode_in_chunks(fmt, data, cuts)
    assert vals.astype(np.dtype(name)).tobytes() == data


@pytest.mark.parametrize("name", ["<f4", "<f8"])
@given(
    vals=st.lists(st.floats(min_value=0.0, max_value=1.0, exclude_max=True, width=32), max_size=64),
    cuts=cuts_st,
)
@settings(max_examples=60, deadline=None)
def test_float_round_trip_any_chunking(name, vals, cuts):
    fmt = parse_format(name)
    arr = np.array(vals, dtype=name)
    out = decode_in_chunks(fmt, arr.tobytes(), cuts)
    assert np.array_equal(out, arr.astype(np.float64))


@given(
    vals=st.lists(st.floats(min_value=0.0, max_value=1.0, exclude_max=True), min_size=1, max_size=64),
    seps=st.lists(st.sampled_from([" ", "\n", "\t", "  ", "\r\n"]), min_size=64, max_size=64),
    cuts=cuts_st,
)
@settings(max_examples=80, deadline=None)
def test_text_float_round_trip_any_chunking(vals, seps, cuts):
    text = "".join(repr(v) + seps[i] for i, v in enumerate(vals)).encode()
    out = decode_in_chunks(parse_format("text"), text, cuts)
    assert out.tolist() == vals


@given(
    vals=st.lists(st.integers(min_value=-5, max_value=70), min_size=1, max_size=64),
    cuts=cuts_st,
)
@settings(max_examples=80, deadline=None)
def test_text_integer_round_trip_any_chunking(vals, cuts):
    text = "\n".join(str(v) for v in vals).encode()  # no trailing newline: last token ends at EOF
    out = decode_in_chunks(parse_format("text", "-5:70"), text, cuts)
    assert out.tolist() == vals


@pytest.mark.parametrize("name", list(BINARY_FORMATS) + ["text"])
@given(data=st.binary(max_size=300), cuts=cuts_st)
@settings(max_examples=60, deadline=None)
def test_bad_bytes_never_crash(name, data, cuts):
    """Arbitrary bytes either decode or raise InputError -- nothing else."""
    fmt = parse_format(name)
    try:
        vals = decode_in_chunks(fmt, data, cuts)
    except InputError as e:
        assert e.line()
        return
    if fmt.is_float:
        assert np.all((vals >= 0) & (vals < 1))


@given(data=st.binary(max_size=300), cuts=cuts_st)
@settings(max_examples=60, deadline=None)
def test_bad_text_with_range_never_crashes(data, cuts):
    fmt = parse_format("text", "1:6")
    try:
        vals = decode_in_chunks(fmt, data, cuts)
    except InputError:
        return
    assert np.all((vals >= 1) & (vals <= 6))


def test_line_numbers_survive_chunking():
    text = b"0.1\n0.2\n0.3\n0.4\n0.5\n1.5\n0.6\n"
    for cut in range(len(text)):
        with pytest.raises(InputError) as ei:
            decode_in_chunks(parse_format("text"), text, [cut])
        assert "line 6" in ei.value.line()
