"""`rngassay fit` from the command line: reports, exit codes, and one clear line for every bad input."""

import json

import numpy as np
import pytest

from rngassay.cli import cli
from rngassay.cli.fit import register_cli

if "fit" not in cli.commands:  # until cli.py registers the command itself
    register_cli(cli)


def pcg(seed):
    return np.random.Generator(np.random.PCG64(seed))


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    d = tmp_path_factory.mktemp("fit")
    rng = pcg(1)
    f = {}
    f["normal.txt"] = d / "normal.txt"
    np.savetxt(f["normal.txt"], rng.normal(2, 3, 20000).reshape(-1, 4))  # several numbers per line
    f["normal.f8"] = d / "normal.f8"
    rng.normal(size=20000).astype("<f8").tofile(f["normal.f8"])
    f["skewed.txt"] = d / "skewed.txt"
    np.savetxt(f["skewed.txt"], rng.exponential(size=20000))  # not normal at all
    f["pois.txt"] = d / "pois.txt"
    np.savetxt(f["pois.txt"], rng.poisson(3, 20000), fmt="%d")
    f["tiers.csv"] = d / "tiers.csv"
    f["tiers.csv"].write_text("outcome,probability\nwin,1/4\nlose,3/4\n")
    f["tiers.toml"] = d / "tiers.toml"
    f["tiers.toml"].write_text("[odds]\nwin = 0.25\nlose = 0.75\n")
    f["draws.txt"] = d / "draws.txt"
    f["draws.txt"].write_text("\n".join(np.where(rng.random(8000) < 0.25, "win", "lose")) + "\n")
    return f


def one_line(r, *words):
    assert r.code == 2, (r.code, r.out, r.err)
    lines = r.err.strip().splitlines()
    assert len(lines) == 1, r.err
    for w in words:
        assert w in lines[0], lines[0]
    return lines[0]


def test_sound_continuous_passes_with_reports(run_cli, files, tmp_path):
    j, h, x = tmp_path / "r.json", tmp_path / "r.html", tmp_path / "r.xml"
    r = run_cli("fit", files["normal.txt"], "--dist", "norm(loc=2, scale=3)", "--workers", "1", "--json", j,
                "--html", h, "--junit", x, "-q")
    assert r.code == 0, r.err
    assert h.read_text().lstrip().lower().startswith("<!doctype html") and "<testcase" in x.read_text()
    d = json.loads(j.read_text())
    assert d["command"] == "fit" and d["verdict"] in ("pass", "notable")
    assert d["source"]["values"] == 20000 and d["settings"]["declaration"] == "norm(loc=2, scale=3)"
    assert any(c["id"].startswith("pit: ") for c in d["checks"])
    assert "not a certification" in r.out or any("not a certification" in c for c in d["cautions"])


def test_binary_and_stdin(run_cli, files):
    r = run_cli("fit", files["normal.f8"], "--format", "<f8", "--dist", "norm", "--workers", "1", "-q")
    assert r.code == 0, r.err
    vals = np.random.Generator(np.random.PCG64(8)).normal(size=200)
    text = "\n".join(f"{v:.17g}" for v in vals).encode()
    r = run_cli("fit", "-", "--dist", "norm", "--no-battery", "-q", stdin=text)
    assert r.code == 0, r.err
    assert "verdict" in r.out and "anderson-darling" in r.out
    # too few values to say anything: refused, not a vacuous pass
    r = run_cli("fit", "-", "--dist", "norm", "--no-battery", "-q", stdin=b"0.1 -0.3\n1.2\n-0.7 0.05\n")
    assert r.code == 2 and "too little data" in r.err


def test_misfit_exits_1(run_cli, files):
    r = run_cli("fit", files["skewed.txt"], "--dist", "norm(loc=1, scale=1)", "--no-battery", "-q")
    assert r.code == 1 and "fail" in r.out


def test_discrete_and_odds(run_cli, files, tmp_path):
    r = run_cli("fit", files["pois.txt"], "--dist", "poisson(mu=3)", "--workers", "1", "-q", "--pit-seed", "5",
                "--json", tmp_path / "p.json")
    assert r.code == 0, r.err
    assert json.loads((tmp_path / "p.json").read_text())["settings"]["pit_seed"] == 5
    for odds in ("tiers.csv", "tiers.toml"):
        r = run_cli("fit", files["draws.txt"], "--odds", files[odds], "--workers", "1", "-q")
        assert r.code == 0, r.err


def test_limit_is_noted(run_cli, files, tmp_path):
    j = tmp_path / "l.json"
    r = run_cli("fit", files["normal.txt"], "--dist", "norm(loc=2, scale=3)", "--limit", "1000", "--no-battery",
                "--json", j, "-q")
    assert r.code == 0
    d = json.loads(j.read_text())
    assert d["source"]["values"] == 1000 and any("first 1000 values" in n for n in d["notes"])


@pytest.mark.parametrize("args,words", [
    (["--dist", "nosuch"], ["unknown distribution 'nosuch'"]),
    (["--dist", "gamma"], ["gamma needs parameter a"]),
    (["--dist", "norm(scale=-2)"], ["invalid parameters for norm"]),
    (["--dist", "norm(mean=0)"], ["no parameter 'mean'"]),
    (["--dist", "norm(loc=2"], ["cannot parse --dist"]),
    (["--dist", "norm(0, 1)"], ["give parameters by name"]),
    ([], ["give --dist SPEC or --odds FILE"]),
    (["--dist", "norm", "--odds", "x.csv"], ["give exactly one of --dist and --odds"]),
    (["--dist", "norm", "--format", "<u4"], ["unknown format"]),
    (["--dist", "norm", "--limit", "0"], ["--limit must be at least 1"]),
])
def test_bad_declarations(run_cli, files, args, words):
    one_line(run_cli("fit", files["normal.txt"], *args), *words)


@pytest.mark.parametrize("name,content,words", [
    ("sum.csv", "outcome,probability\nwin,0.3\nlose,0.75\n", ["sum.csv", "sum to 1.05"]),
    ("neg.csv", "outcome,probability\nwin,-0.25\nlose,1.25\n", ["neg.csv line 2", "negative probability"]),
    ("dup.csv", "outcome,probability\nwin,0.5\nwin,0.5\n", ["dup.csv line 3", "duplicate outcome 'win'"]),
    ("head.csv", "tier,odds\nwin,0.5\nlose,0.5\n", ["head.csv line 1", "header"]),
    ("rows.csv", "outcome,probability\nwin,0.25,extra\nlose,0.75\n", ["rows.csv line 2", "2 fields"]),
    ("bad.toml", "[odds]\nwin = 0.25\nlose = = 0.75\n", ["bad.toml line 3", "malformed TOML"]),
    ("noodds.toml", "[tiers]\nwin = 0.25\nlose = 0.75\n", ["noodds.toml", "[odds]"]),
])
def test_bad_odds_files(run_cli, files, tmp_path, name, content, words):
    p = tmp_path / name
    p.write_text(content)
    one_line(run_cli("fit", files["draws.txt"], "--odds", p), *words)


def test_outcome_missing_from_declaration(run_cli, files, tmp_path):
    d = tmp_path / "d.txt"
    d.write_text("win lose\nlose\nlose draw\n")
    one_line(run_cli("fit", d, "--odds", files["tiers.csv"]), "d.txt line 3", "outcome 'draw' is not in the odds")
    p = tmp_path / "b.txt"
    p.write_text("1 2 3\n4 5\n11 2\n")
    one_line(run_cli("fit", p, "--dist", "binom(n=10, p=0.3)"), "b.txt line 3", "outcome 11 has probability 0")
    p.write_text("1 2 3\n4.5 5\n")
    one_line(run_cli("fit", p, "--dist", "poisson(mu=3)"), "b.txt line 2", "not a whole number")


@pytest.mark.parametrize("content,words", [
    (b"1.0 2.0\n3.0 nan\n", ["v.txt line 2", "NaN"]),
    (b"1.0\n2.0\ninf\n", ["v.txt line 3", "infinite"]),
    (b"1.0\n2,5\n", ["v.txt line 2", "cannot read '2,5'"]),
    (b"", ["no values"]),
])
def test_bad_values(run_cli, tmp_path, content, words):
    p = tmp_path / "v.txt"
    p.write_bytes(content)
    one_line(run_cli("fit", p, "--dist", "norm"), *words)


def test_bad_binary_and_missing_files(run_cli, tmp_path, files):
    p = tmp_path / "v.f8"
    x = np.arange(10, dtype="<f8")
    x[4] = np.nan
    x.tofile(p)
    one_line(run_cli("fit", p, "--format", "<f8", "--dist", "norm"), "byte offset 32", "NaN")
    p.write_bytes(np.arange(10, dtype="<f8").tobytes() + b"\x01")
    one_line(run_cli("fit", p, "--format", "<f8", "--dist", "norm"), "not a whole number")
    one_line(run_cli("fit", tmp_path / "missing.txt", "--dist", "norm"), "file not found")
    one_line(run_cli("fit", files["draws.txt"], "--odds", tmp_path / "missing.csv"), "odds file not found")
    one_line(run_cli("fit", files["draws.txt"], "--odds", files["tiers.csv"], "--format", "<f8"), "need --format text")
