"""One-pass (accumulator) forms of the counting checks against their function forms, on random chunk
boundaries (hypothesis): the same CheckResult for the same bytes, however they are cut. The function forms are
themselves checked against outside sources in their own tests (chi-square via scipy, SP 800-22 examples)."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from rngassay.checks.accumulators import (ApproximateEntropy, ByteFrequency, ByteHistogram, CyclicPatterns, Monobit,
                                         PokerBits, SerialPsi2, U16Frequency)
from rngassay.checks.bits.serial import approximate_entropy, pattern_counts, serial_psi2
from rngassay.checks.bits.frequency import monobit_frequency, poker_symbols
from rngassay.checks.classic.frequency import check_byte_frequency, check_u16_frequency
from rngassay.errors import InputError


def _same(a, b):
    assert a.name == b.name and a.null == b.null and a.kind == b.kind and a.n == b.n
    assert a.statistic == b.statistic and a.p_value == b.p_value and a.p_left == b.p_left
    assert a.details == b.details
    for k in (a.pooled or {}):
        assert np.array_equal(np.asarray(a.pooled[k]), np.asarray(b.pooled[k])), k


def _cuts(data: np.ndarray, points: list[int]) -> list[np.ndarray]:
    edges = sorted({0, data.size, *(p % (data.size + 1) for p in points)})
    return [data[i:j] for i, j in zip(edges, edges[1:])] + [data[:0]]  # an empty chunk too


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), size=st.integers(256, 70_000), points=st.lists(st.integers(0, 10**6),
                                                                                        max_size=12))
def test_shared_histogram_checks_equal_their_function_forms(seed, size, points):
    data = np.random.default_rng(seed).integers(0, 256, size, dtype=np.uint8)
    hist = ByteHistogram()
    accs = [ByteFrequency(hist), Monobit(hist), PokerBits(4, hist), PokerBits(8, hist)]
    for chunk in _cuts(data, points):
        hist.update(chunk)  # the shared histogram is fed once for all four checks
        for a in accs:
            a.update(chunk)  # (a no-op for a shared histogram)
    _same(accs[0].finish(), check_byte_frequency(data))
    _same(accs[1].finish(), monobit_frequency(data))
    _same(accs[2].finish(), poker_symbols(data, m=4))
    _same(accs[3].finish(), poker_symbols(data, m=8))


@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), extra=st.integers(0, 5000), points=st.lists(st.integers(0, 10**6),
                                                                                     max_size=12))
def test_u16_frequency_carries_odd_bytes_across_chunks(seed, extra, points):
    data = np.random.default_rng(seed).integers(0, 256, 2 * 65536 + extra, dtype=np.uint8)
    acc = U16Frequency()
    for chunk in _cuts(data, points):
        acc.update(chunk)
    _same(acc.finish(), check_u16_frequency(data))


def test_a_biased_stream_fails_the_same_way_in_both_forms():
    # the one-pass form is not a weaker test: a byte stream with a stuck top bit fails monobit and byte frequency
    data = np.random.default_rng(3).integers(0, 256, 1 << 16, dtype=np.uint8) | np.uint8(0x80)
    own = [ByteFrequency(), Monobit()]
    for a in own:
        for chunk in np.array_split(data, 7):
            a.update(chunk)
    assert own[0].finish().p_value < 1e-100 and own[1].finish().p_value < 1e-100
    _same(own[1].finish(), monobit_frequency(data))


def test_too_little_data_and_wrong_dtype_are_input_errors():
    acc = ByteFrequency()
    acc.update(np.zeros(10, dtype=np.uint8))
    with pytest.raises(InputError, match="at least 256"):
        acc.finish()
    with pytest.raises(InputError, match="uint8"):
        Monobit().update(np.zeros(4, dtype=np.float64))
    with pytest.raises(InputError):
        PokerBits(5)


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), size=st.integers(2, 9000), points=st.lists(st.integers(0, 10**6),
                                                                                  max_size=12))
def test_cyclic_pattern_table_equals_the_function_form(seed, size, points):
    # the table itself, on any cut, including one-byte chunks and streams shorter than four bytes
    data = np.random.default_rng(seed).integers(0, 256, size, dtype=np.uint8)
    acc = CyclicPatterns()
    for chunk in _cuts(data, points):
        acc.update(chunk)
    assert np.array_equal(acc.table(), pattern_counts(data, 8 * size, 16))
    one = CyclicPatterns()
    for k in range(min(size, 40)):
        one.update(data[k: k + 1])
    assert np.array_equal(one.table(), pattern_counts(data[:40], 8 * min(size, 40), 16))


@settings(max_examples=15, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), size=st.integers(2048, 70_000), points=st.lists(st.integers(0, 10**6),
                                                                                      max_size=12))
def test_serial_and_approximate_entropy_equal_their_function_forms(seed, size, points):
    data = np.random.default_rng(seed).integers(0, 256, size, dtype=np.uint8)
    tab = CyclicPatterns()
    accs = [SerialPsi2(16, 1, tab), SerialPsi2(9, 2, tab), ApproximateEntropy(10, tab), ApproximateEntropy(3, tab)]
    for chunk in _cuts(data, points):
        tab.update(chunk)  # fed once for all four
        for a in accs:
            a.update(chunk)
    _same(accs[0].finish(), serial_psi2(data, m=16, order=1))
    _same(accs[1].finish(), serial_psi2(data, m=9, order=2))
    _same(accs[2].finish(), approximate_entropy(data, m=10))
    _same(accs[3].finish(), approximate_entropy(data, m=3))
    own = SerialPsi2(5, 1)  # with a table of its own
    for chunk in _cuts(data, points):
        own.update(chunk)
    _same(own.finish(), serial_psi2(data, m=5, order=1))


def test_cyclic_pattern_table_refuses_too_few_bits():
    acc = CyclicPatterns()
    acc.update(np.array([7], dtype=np.uint8))
    with pytest.raises(InputError):
        acc.table()
