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
