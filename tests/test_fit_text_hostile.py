"""`fit` text input: no endless buffering without white space, and only plain ASCII numbers (wave 2b)."""

import pytest


def test_fit_dev_zero_ends_with_one_line(run_cli):
    r = run_cli("fit", "/dev/zero", "--dist", "norm")
    assert r.code == 2 and "no white space" in r.err and len(r.err.strip().splitlines()) == 1


@pytest.mark.parametrize("token", ["0.1_5", "\u0663", "1\u00b2"])
def test_fit_refuses_numbers_float_would_take(run_cli, tmp_path, token):
    p = tmp_path / "v.txt"
    p.write_text("0.1 0.2\n0.3 " + token + "\n", encoding="utf-8")
    r = run_cli("fit", str(p), "--dist", "norm")
    assert r.code == 2 and "line 2" in r.err and "as a number" in r.err


def test_fit_still_reads_negative_zero_and_labels(run_cli, tmp_path):
    # -0.0 is a legitimate variate of a symmetric law; non-ASCII outcome labels are fine in --odds mode
    p = tmp_path / "v.txt"
    p.write_text(" ".join(["-0.0"] + [f"{x:.6f}" for x in (0.3, -1.2, 0.8, -0.4)] * 30) + "\n")
    assert run_cli("fit", str(p), "--dist", "norm").code in (0, 1)
    odds = tmp_path / "odds.csv"
    odds.write_text("outcome,probability\nété,1/2\nhiver,1/2\n", encoding="utf-8")
    draws = tmp_path / "d.txt"
    draws.write_text(("été hiver " * 100) + "\n", encoding="utf-8")
    assert run_cli("fit", str(draws), "--odds", str(odds)).code in (0, 1)


def test_fit_interrupted_during_its_checks_reports_what_finished(monkeypatch):
    # a stop signal (KeyboardInterrupt, as the signal guard raises it) in the middle of the fit checks: the
    # fit returns a report marked incomplete, with the checks that finished, and never a silent pass
    import numpy as np

    from rngassay import api
    from rngassay.battery import conformance

    def stop(*a, **k):
        raise KeyboardInterrupt

    monkeypatch.setattr(conformance, "extreme_value_check", stop)
    x = np.random.default_rng(4).normal(size=5000)
    rep = api.fit(x, dist="norm")
    assert rep.incomplete
    assert any("interrupted during the fit checks" in n for n in rep.notes)
    assert {c.key for c in rep.checks} >= {"anderson-darling"} and not any(c.id.startswith("pit:") for c in rep.checks)
    monkeypatch.setattr(conformance, "anderson_darling_check", stop)
    rep0 = api.fit(x, dist="norm")
    assert rep0.verdict == "no verdict" and rep0.exit_code() == 2
