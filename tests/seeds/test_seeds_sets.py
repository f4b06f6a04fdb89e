"""Seed sets: ranges, lists, files, the named adversarial sets, and bad input (one clear error)."""

from math import comb

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from rngassay.errors import InputError
from rngassay.seeds.seedsets import MAX_SEED, named_seed_set, parse_seeds, resolve_seeds


def test_inclusive_range_list_and_mixed():
    assert parse_seeds("0..999").tolist() == list(range(1000))
    assert parse_seeds("7..7").tolist() == [7]
    assert parse_seeds("1,5,9").tolist() == [1, 5, 9]  # order kept
    assert parse_seeds("9,1").tolist() == [9, 1]
    assert parse_seeds("0..2, 10, 0x10, 20..21").tolist() == [0, 1, 2, 10, 16, 20, 21]
    top = parse_seeds(f"{MAX_SEED - 1}..{MAX_SEED}")
    assert top.dtype == np.uint64 and [int(x) for x in top] == [MAX_SEED - 1, MAX_SEED]


def test_seed_file_with_comments_and_line_numbers(tmp_path):
    p = tmp_path / "seeds.txt"
    p.write_text("# my seeds\n5\n\n0x0a  # ten\n7\n")
    assert parse_seeds(f"@{p}").tolist() == [5, 10, 7]
    p.write_text("5\n6\nsix\n")
    with pytest.raises(InputError) as e:
        parse_seeds(f"@{p}")
    assert e.value.where == f"{p} line 3" and "six" in e.value.what
    p.write_text("5\n6\n\n5\n")
    with pytest.raises(InputError) as e:
        parse_seeds(f"@{p}")
    assert e.value.where == f"{p} line 4" and "line 1" in e.value.what
    p.write_text("# nothing\n\n")
    with pytest.raises(InputError, match="empty seed set"):
        parse_seeds(f"@{p}")
    with pytest.raises(InputError, match="not found"):
        parse_seeds(f"@{tmp_path / 'missing.txt'}")


@pytest.mark.parametrize("text, words", [
    ("", "empty seed set"), ("5..1", "end is below the start"), ("1,,2", "empty item"), ("abc", "not a seed"),
    ("-3", "negative"), ("1.5", "not a seed"), (str(2**64), "too large"), ("1,2,1", "appears twice"),
    ("0..20000000", "at most"), ("@", "no file"),
])
def test_bad_seed_syntax_is_one_clear_error(text, words):
    with pytest.raises(InputError) as e:
        parse_seeds(text)
    assert words in e.value.line() and "\n" not in e.value.line()


def test_named_sets_have_the_documented_sizes():
    assert named_seed_set("consecutive").tolist() == list(range(1000))
    assert named_seed_set("consecutive:5").tolist() == [0, 1, 2, 3, 4]
    p2 = named_seed_set("powers-of-two")
    assert p2.size == 65 and int(p2[0]) == 0 and {int(x) for x in p2[1:]} == {1 << i for i in range(64)}
    lw = named_seed_set("low-weight")
    # all 64-bit words of Hamming weight 0, 1 or 2: C(64,0) + C(64,1) + C(64,2) = 2081 (exact count)
    assert lw.size == comb(64, 0) + comb(64, 1) + comb(64, 2) == 2081
    weights = np.unpackbits(lw.view(np.uint8).reshape(-1, 8), axis=1).sum(axis=1)
    assert weights.max() == 2 and np.unique(lw).size == lw.size
    ones = named_seed_set("all-ones")
    assert ones.size == 65 and int(ones[-1]) == 2**64 - 1 and int(ones[3]) == 7
    for bad in ("bogus", "consecutive:0", "consecutive:x", "low-weight:5"):
        with pytest.raises(InputError):
            named_seed_set(bad)


def test_exactly_one_of_seeds_and_seed_set():
    with pytest.raises(InputError, match="no seeds given"):
        resolve_seeds(None, None)
    with pytest.raises(InputError, match="both"):
        resolve_seeds("1..3", "consecutive")


@settings(max_examples=60, deadline=None)
@given(st.lists(st.integers(0, MAX_SEED), min_size=1, max_size=30, unique=True))
def test_list_round_trip(values):
    assert [int(x) for x in parse_seeds(",".join(map(str, values)))] == values


@settings(max_examples=60, deadline=None)
@given(st.text(max_size=20))
def test_arbitrary_text_never_crashes(text):
    try:
        out = parse_seeds(text)
    except InputError:
        return
    assert out.dtype == np.uint64 and out.size >= 1
