"""The Python API as a user's own test suite would call it (README example)."""

import numpy as np

import rngassay


def test_assay_a_generator_object():
    report = rngassay.assay(np.random.Generator(np.random.PCG64(20261201)), budget="1MiB", workers=1,
                            checks=["classic"])
    assert report.verdict in ("pass", "notable")  # fixed seed: deterministic outcome
    assert report.source["kind"] == "python" and report.source["bytes_read"] > 0
    assert report.to_dict()["checks"] and report.exit_code() == 0
    assert '"schema"' in report.to_json()


def test_assay_a_draw_callable_fails_a_flawed_stream():
    # bytes that are all even: the low bit of every byte is 0 (invented flaw; must fail at p < 1e-10)
    bg = np.random.PCG64(3)

    def draw(n):
        return (np.frombuffer(bg.random_raw(-(-n // 8)).tobytes()[:n], np.uint8) & 0xFE).astype(np.uint8)

    report = rngassay.assay(draw, budget="1MiB", workers=1)
    assert report.verdict == "fail" and report.exit_code() == 1
    assert min(c.p_value for c in report.checks) < 1e-10
