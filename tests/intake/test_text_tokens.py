"""Text without separators is refused, not buffered without end (wave 2b item 5); long tokens are shown short."""

import pytest

from rngassay.errors import InputError
from rngassay.intake.formats import MAX_TOKEN_BYTES, Decoder, parse_format


def test_text_with_no_white_space_is_refused_past_the_token_limit():
    d = Decoder(parse_format("text"), "zeros")
    d.feed(b"\0" * MAX_TOKEN_BYTES)  # up to the limit it may still be one long token
    with pytest.raises(InputError, match="no white space"):
        d.feed(b"\0")


def test_dev_zero_as_text_ends_with_exit_2(run_cli):
    r = run_cli("test", "/dev/zero", "--format", "text", "--budget", "1MiB")
    assert r.code == 2
    assert len(r.err.strip().splitlines()) == 1 and "no white space" in r.err


def test_a_long_bad_token_is_shown_short(tmp_path, run_cli):
    p = tmp_path / "t.txt"
    p.write_text("0.5 " + "1" * 3000 + "\n")
    r = run_cli("test", str(p), "--format", "text")
    assert r.code == 2 and "(3000 bytes)" in r.err and len(r.err) < 400


def test_a_uniform_rounded_up_to_one_is_read_as_the_grid_point_zero():
    # printing u in [0.9999995, 1) with %.6f gives "1.000000": on the 10^-6 grid that is the point 10^6,
    # i.e. 0 modulo 1 -- with it, the rounded values are exactly uniform on the grid again
    d = Decoder(parse_format("text"), "t")
    vals = d.feed(b"0.5\n1.000000\n0.25\n")
    assert list(vals) == [0.5, 0.0, 0.25] and d.wrapped_ones == 1
    for other in (b"0.5\n1\n0.1\n", b"0.5\n1.0e0\n0.1\n", b"0.5\n1.5\n0.1\n"):
        with pytest.raises(InputError):
            Decoder(parse_format("text"), "t").feed(other)
