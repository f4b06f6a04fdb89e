"""Reading outcome logs: CSV and JSON lines, file:line errors, a partial last line, chunked reading equal to
whole reading, and the log's identity (truncation, rotation, rewriting)."""

import os

import pytest
from hypothesis import given, settings, strategies as st

from rngassay.errors import InputError
from rngassay.watch.log import Columns, LineParser, check_same_log, complete_part, identity, sniff_format

COLS = Columns(outcome="tier", stake="stake", payout="paid", time="at")


def test_csv_with_header_and_columns():
    p = LineParser("g.csv", "csv", COLS)
    r = p.parse(b"at,tier,stake,paid\n09:00,lose,1,0\n\n09:01,\"win\",2,10.5\n", 1)
    assert r.outcomes == ["lose", "win"] and r.stakes == [1.0, 2.0] and r.payouts == [0.0, 10.5]
    assert r.times == ["09:00", "09:01"] and r.lines == [2, 4]  # the blank line 3 still counts as a line
    assert p.header == ["at", "tier", "stake", "paid"]


def test_jsonl_keys_and_numbers_as_labels():
    p = LineParser("g.jsonl", "jsonl", Columns(stake="stake"))
    r = p.parse(b'{"outcome": "a", "stake": 1}\n{"outcome": 3, "stake": "2.5"}\n', 10)
    assert r.outcomes == ["a", "3"] and r.stakes == [1.0, 2.5] and r.lines == [10, 11]


@pytest.mark.parametrize("fmt,data,line,what", [
    ("csv", b"tier,stake,paid,at\nwin,x,0,t\n", 2, "stake 'x'"),
    ("csv", b"tier,stake,paid,at\nwin,1,0\n", 2, "expected 4 fields"),
    ("jsonl", b'{"tier": "a", "stake": 1, "paid": 0}\n{"tier": "a", "stake": 1, "paid": -2}\n', 2, "payout '-2'"),
    ("jsonl", b'{"tier": "a", "stake": 1, "paid": 0}\n{"tier": \n', 2, "malformed JSON"),
    ("jsonl", b'["a"]\n', 1, "must be an object"),
    ("jsonl", b'{"stake": 1, "paid": 0}\n', 1, "no outcome"),
])
def test_bad_line_names_file_and_line(fmt, data, line, what):
    with pytest.raises(InputError) as e:
        LineParser("log", fmt, COLS).parse(data, 1)
    assert e.value.where == f"log line {line}", e.value.line()
    assert what in e.value.what and "--skip-bad" in e.value.hint


def test_header_without_the_outcome_column_is_refused_even_with_skip_bad():
    with pytest.raises(InputError) as e:
        LineParser("log", "csv", COLS, skip_bad=True).parse(b"outcome\nwin\n", 1)
    assert "no column 'tier'" in e.value.what and e.value.where == "log line 1" and "--outcome-column" in e.value.hint


def test_skip_bad_counts_each_bad_line():
    p = LineParser("log", "csv", Columns(stake="s"), skip_bad=True)
    r = p.parse(b"outcome,s\na,1\nb,oops\n\xff\xfe,1\nc,2\n", 1)
    assert r.outcomes == ["a", "c"] and [ln for ln, _ in r.skipped] == [3, 4]


def test_partial_last_line_waits():
    assert complete_part(b"a\nb\nhalf") == b"a\nb\n"
    assert complete_part(b"half") == b""


def test_sniff():
    assert sniff_format("x.jsonl", b"") == "jsonl" and sniff_format("x.csv", b"{") == "csv"
    assert sniff_format("x.log", b'  {"outcome": 1}') == "jsonl" and sniff_format("x.log", b"outcome\n") == "csv"


@settings(max_examples=40, deadline=None)
@given(st.lists(st.sampled_from(["lose", "small", "big"]), max_size=40), st.lists(st.integers(1, 60), max_size=8))
def test_chunked_reading_equals_whole(outcomes, cuts):
    """Cut the log anywhere (mid-line too); consuming complete lines chunk by chunk gives the same records."""
    data = ("outcome,stake\n" + "".join(f"{o},{i % 3 + 1}\n" for i, o in enumerate(outcomes))).encode()
    whole = LineParser("l", "csv", Columns(stake="stake")).parse(data, 1)
    p = LineParser("l", "csv", Columns(stake="stake"))
    got, got_lines, off, line = [], [], 0, 0
    ends = sorted({min(len(data), c * 7) for c in cuts}) + [len(data)]
    for end in ends:
        chunk = complete_part(data[off:end])
        r = p.parse(chunk, line + 1)
        got += list(zip(r.outcomes, r.stakes))
        got_lines += r.lines
        off += len(chunk)
        line += chunk.count(b"\n")
    assert got == list(zip(whole.outcomes, whole.stakes)) and got_lines == whole.lines and off == len(data)


def test_identity_notices_truncation_rotation_rewrite(tmp_path):
    f = tmp_path / "g.csv"
    f.write_bytes(b"outcome\n" + b"a\n" * 100)
    off = f.stat().st_size
    saved = identity(str(f), off)
    assert check_same_log(str(f), saved, off) is None
    with open(f, "ab") as h:  # growth is fine
        h.write(b"b\n")
    assert check_same_log(str(f), saved, off) is None
    with open(f, "r+b") as h:  # rewritten in place before the offset
        h.seek(off - 2)
        h.write(b"c")
    assert "rewritten" in check_same_log(str(f), saved, off)
    os.truncate(f, 50)
    assert "truncated" in check_same_log(str(f), saved, off)
    os.replace(f, tmp_path / "g.csv.1")
    f.write_bytes(b"outcome\n" + b"a\n" * 200)
    assert "rotated" in check_same_log(str(f), saved, off)
    os.remove(f)
    assert "gone" in check_same_log(str(f), saved, off)


def test_an_empty_log_whose_name_does_not_say_its_format_is_refused(tmp_path):
    # guessing would bind the state to the guess (JSON lines arriving later would then be refused)
    from rngassay.errors import InputError
    from rngassay.watch.log import sniff_format

    with pytest.raises(InputError, match="--log-format"):
        sniff_format(str(tmp_path / "game.log"), b"")
    assert sniff_format(str(tmp_path / "game.jsonl"), b"") == "jsonl"
    assert sniff_format(str(tmp_path / "game.log"), b'{"outcome": "lose"}\n') == "jsonl"
