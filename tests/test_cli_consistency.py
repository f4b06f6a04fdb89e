"""The commands speak one language: an option name means the same thing in every command that has it, and the
options shared by the commands that read a stream (budget, plan-only, checks/skip, the sources, report paths,
quiet) are on `test`, `fit` and `seeds`. Then the new options of `fit` and `seeds` at work, and one line with exit 2
for each kind of bad input to them."""

import json

import click
import numpy as np
import pytest

from rngassay.cli import cli
from rngassay.cli.common import MEANINGS, SharedOption

#: What `test`, `fit` and `seeds` all take (`seeds` has no --seed: it sweeps seeds with --seeds / --seed-set).
SHARED_SET = ("--budget", "--plan-only", "--checks", "--skip", "--command", "--shell", "--python", "--gen", "--json",
              "--html", "--junit", "--quiet")


def _options(cmd: click.Command) -> dict[str, click.Option]:
    return {name: p for p in cmd.params if isinstance(p, click.Option) for name in p.opts if name.startswith("--")}


def _type(p: click.Option) -> tuple:
    return (p.type.name, p.is_flag, p.multiple)


def test_every_option_name_has_one_meaning():
    by_name: dict[str, list[tuple[str, click.Option]]] = {}
    for cname, cmd in cli.commands.items():
        for name, p in _options(cmd).items():
            by_name.setdefault(name, []).append((cname, p))
    repeated = {n: ps for n, ps in by_name.items() if len(ps) > 1 and n != "--help"}
    assert {"--budget", "--checks", "--quiet", "--gen", "--alpha", "--workers"} <= set(repeated)  # the walk sees them
    for name, ps in repeated.items():
        kinds = {_type(p) for _, p in ps}
        assert len(kinds) == 1, f"{name} has different types across commands: {ps}"
        if all(isinstance(p, SharedOption) for _, p in ps):
            meanings = {p.meaning for _, p in ps}
            assert len(meanings) == 1, f"{name}: {meanings}"
            stem = MEANINGS[meanings.pop()]
            for cname, p in ps:  # the shared stem first; a command may only add to it
                assert p.help.startswith(stem), f"{cname} {name}: {p.help!r}"
                assert p.name == ps[0][1].name, f"{cname} {name} is passed as {p.name}"
        else:
            helps = {p.help for _, p in ps}
            assert len(helps) == 1, f"{name} is not a shared option and its help differs: {helps}"


def test_shared_set_on_test_fit_and_seeds():
    for cname in ("test", "fit", "seeds"):
        opts = _options(cli.commands[cname])
        missing = [n for n in SHARED_SET if n not in opts]
        assert not missing, f"{cname} lacks {missing}"
        assert all(isinstance(opts[n], SharedOption) for n in SHARED_SET), cname
    assert "--seed" in _options(cli.commands["test"]) and "--seed" in _options(cli.commands["fit"])


def test_every_command_takes_q_with_one_meaning():
    for cname, cmd in cli.commands.items():
        q = [p for p in cmd.params if "-q" in getattr(p, "opts", ())]
        assert len(q) == 1 and set(q[0].opts) == {"--quiet", "-q"}, cname
        assert isinstance(q[0], SharedOption) and q[0].meaning == "quiet", cname
        assert "progress" in q[0].help, cname  # documented in each --help


# ---------------------------------------------------------------------------------------------- at work


@pytest.fixture(scope="module")
def data(tmp_path_factory):
    d = tmp_path_factory.mktemp("consistency")
    rng = np.random.Generator(np.random.PCG64(5))
    f = {"txt": d / "n.txt", "f8": d / "n.f8", "gen.py": d / "sampler.py"}
    np.savetxt(f["txt"], rng.normal(size=3000))
    rng.normal(size=10000).astype("<f8").tofile(f["f8"])  # 80000 bytes: enough for the PIT battery (64 KiB)
    # a sampler whose draw(n_bytes) hands over normal variates encoded as little-endian doubles
    f["gen.py"].write_text(
        "import numpy as np\n"
        "def make(seed):\n"
        "    rng = np.random.default_rng(seed)\n"
        "    return lambda n: rng.normal(size=n // 8).astype('<f8').tobytes()\n")
    return f


def one_line(r, *words):
    assert r.code == 2, (r.code, r.out, r.err)
    lines = r.err.strip().splitlines()
    assert len(lines) == 1, r.err
    assert "Traceback" not in r.err
    for w in words:
        assert w in lines[0], lines[0]


def test_fit_budget_counts_values_for_text_and_bytes_for_binary(run_cli, data, tmp_path):
    j = tmp_path / "t.json"
    r = run_cli("fit", data["txt"], "--dist", "norm", "--budget", "1000", "--no-battery", "--json", j, "-q")
    assert r.code == 0, r.err
    assert json.loads(j.read_text())["source"]["values"] == 1000
    r = run_cli("fit", data["f8"], "--format", "<f8", "--dist", "norm", "--budget", "8000", "--no-battery",
                "--json", j, "-q")
    assert r.code == 0, r.err
    d = json.loads(j.read_text())
    assert d["source"]["values"] == 1000 and d["source"]["bytes_read"] == 8000


def test_fit_plan_only_names_what_the_run_runs(run_cli, data, tmp_path):
    j = tmp_path / "never.json"
    plan = run_cli("fit", data["f8"], "--format", "<f8", "--dist", "norm", "--plan-only", "--json", j)
    assert plan.code == 0, plan.err
    assert not j.exists()  # the plan writes no report
    assert "reads 10000 values in all (80000 bytes)" in plan.out
    planned = [ln.strip() for ln in plan.out.splitlines() if ln.startswith("  ") and not ln.startswith("   ")]
    r = run_cli("fit", data["f8"], "--format", "<f8", "--dist", "norm", "--workers", "1", "--json", j, "-q")
    assert r.code in (0, 1), r.err
    d = json.loads(j.read_text())
    fit_ids = [c["id"] for c in d["checks"] if c["family"] == "fit"]
    assert fit_ids and all(i in planned for i in fit_ids)  # every fit check run was in the plan
    pit_ids = {c["id"] for c in d["checks"] if c["id"].startswith("pit: ")}
    pit_lines = [ln.strip() for ln in plan.out.splitlines() if ln.startswith("    ")]
    assert pit_ids and all(any(ln.startswith(pid + " ") for ln in pit_lines) for pid in pit_ids)


def test_fit_plan_only_follows_the_selection(run_cli, data):
    r = run_cli("fit", data["f8"], "--format", "<f8", "--dist", "norm", "--plan-only", "--checks", "anderson-darling",
                "--skip", "pit")
    assert r.code == 0, r.err
    assert "anderson-darling" in r.out and "tail count" not in r.out and "PIT battery:" not in r.out


def test_fit_gen_gives_uniforms_and_records_the_seed(run_cli, tmp_path):
    j = tmp_path / "g.json"
    r = run_cli("fit", "--gen", "pcg64", "--seed", "7", "--dist", "uniform", "--budget", "64KiB", "--no-battery",
                "--json", j, "-q")
    assert r.code == 0, r.err
    d = json.loads(j.read_text())
    assert d["source"]["values"] == 65536 // 8 and d["source"]["bytes_read"] == 65536  # 8 bytes per uniform (u1)
    assert {"source": "--gen pcg64", "seed": 7, "origin": "given"} in d["audit"]["seeds"]


def test_fit_python_sampler(run_cli, data, tmp_path):
    j = tmp_path / "p.json"
    r = run_cli("fit", "--python", f"{data['gen.py']}:make", "--seed", "3", "--format", "<f8", "--dist", "norm",
                "--budget", "80000", "--no-battery", "--json", j, "-q")
    assert r.code == 0, r.err
    d = json.loads(j.read_text())
    assert d["source"]["values"] == 10000 and d["source"]["bytes_read"] == 80000  # 80000 bytes of doubles
    assert any(s.get("source", "").startswith("--python") and s["seed"] == 3 for s in d["audit"]["seeds"])


@pytest.mark.parametrize("args,words", [
    (["DATA", "--dist", "norm", "--budget", "0"], ["--budget must be positive"]),
    (["DATA", "--dist", "norm", "--budget", "lots"], ["cannot read --budget"]),
    (["DATA", "--dist", "norm", "--budget", "5000"], ["shorter than the budget", "5000 values needed", "3000"]),
    (["DATA", "--dist", "norm", "--budget", "100", "--limit", "10"], ["--budget and --limit given"]),
    (["F8", "--format", "<f8", "--dist", "norm", "--budget", "4"], ["less than one 8-byte value"]),
    (["F8", "--format", "<f8", "--dist", "norm", "--budget", "1GiB"], ["above fit's maximum"]),
    (["--gen", "pcg64", "--odds", "ODDS"], ["--gen pcg64 gives uniforms", "declare a continuous"]),
    (["--gen", "pcg64", "--dist", "poisson(mu=3)"], ["gives uniforms"]),
    (["--gen", "pcg64", "--format", "<f8", "--dist", "uniform"], ["--format <f8 with --gen"]),
    (["--gen", "nosuch", "--dist", "uniform"], ["nosuch"]),
    (["DATA", "--gen", "pcg64", "--dist", "uniform"], ["more than one source"]),
    (["DATA", "--seed", "3", "--dist", "norm"], ["--seed applies to --gen and --python"]),
    (["--python", "nofile.py:make", "--dist", "norm"], ["nofile.py"]),
    (["DATA", "--shell", "--dist", "norm"], ["--shell applies to --command"]),
    (["DATA", "--dist", "norm", "--plan-only", "--checks", "nosuch", "--skip", "pit"], ["no check matched"]),
    (["DATA", "--dist", "norm", "--seed", "x"], ["'x' is not a valid integer"]),
])
def test_fit_bad_new_options_one_line(run_cli, data, tmp_path, args, words):
    odds = tmp_path / "o.csv"
    odds.write_text("outcome,probability\na,1/2\nb,1/2\n")
    swap = {"DATA": str(data["txt"]), "F8": str(data["f8"]), "ODDS": str(odds)}
    r = run_cli("fit", *[swap.get(a, a) for a in args])
    one_line(r, *words)


SEEDS = ["seeds", "--gen", "pcg64", "--seeds", "0..15", "--avalanche-seeds", "4", "--merge-budget", "64KiB"]


def test_seeds_plan_only_and_budget(run_cli, tmp_path):
    j = tmp_path / "never.json"
    r = run_cli(*SEEDS, "--bytes-per-seed", "4KiB", "--plan-only", "--json", j)
    assert r.code == 0, r.err
    assert not j.exists()
    assert "16 seeds, 4096 bytes of each seed's stream" in r.out
    av = int(r.out.split(" bytes for the avalanche")[0].rsplit(" ", 1)[1])
    assert f"reads {16 * 4096 + av} bytes in all" in r.out
    # --budget: the same total shared by the seeds, rounded down to whole 8-byte words
    r = run_cli(*SEEDS, "--budget", str(16 * 4096 + av + 100), "--plan-only")
    assert r.code == 0, r.err
    assert "4096 bytes of each seed's stream" in r.out
    # the run reads what the plan said for each seed's stream
    r = run_cli(*SEEDS, "--budget", str(16 * 4096 + av), "--workers", "1", "--json", j, "-q")
    assert r.code in (0, 1), r.err
    assert json.loads(j.read_text())["budget_bytes"] == 16 * 4096
    assert "verdict" in r.out  # -q takes the progress only: the table is still printed


@pytest.mark.parametrize("args,words", [
    (["--budget", "1MiB", "--bytes-per-seed", "4KiB"], ["--budget and --bytes-per-seed given"]),
    (["--budget", "100"], ["too small for 16 seeds", "give at least --budget"]),
    (["--budget", "-5"], ["--budget must be positive"]),
    (["--budget", "1GiB"], ["above the maximum"]),
    (["--budget", "20KiB", "--lags", "300"], ["--lags 300 is too large"]),
    (["--plan-only", "--checks", "nosuch"], ["no seed check selected"]),
    (["--plan-only", "--seed-bits", "0"], ["--seed-bits must be between 1 and 64"]),
])
def test_seeds_bad_new_options_one_line(run_cli, args, words):
    one_line(run_cli(*SEEDS, *args), *words)


def test_emit_diff_and_catalog_take_q(run_cli, tmp_path):
    import subprocess
    import sys

    assert run_cli("catalog", "-q").code == 0
    r = subprocess.run([sys.executable, "-m", "rngassay", "emit", "pcg64", "--bytes", "16", "-q"], capture_output=True,
                       timeout=120)
    assert r.returncode == 0 and len(r.stdout) == 16, r.stderr
    rep = tmp_path / "r.json"
    assert run_cli("test", "--gen", "pcg64", "--budget", "64KiB", "--checks", "monobit", "--json", rep,
                   "-q").code == 0
    r = run_cli("diff", rep, rep, "-q")
    assert r.code == 0, r.err
