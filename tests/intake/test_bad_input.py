"""Every bad input named in the intake contract: one line on stderr, exit code 2, no traceback."""

import os
import struct
import sys

import numpy as np
import pytest


def one_line_error(r, *needles):
    assert r.code == 2, (r.code, r.out, r.err)
    lines = [l for l in r.err.splitlines() if l.strip()]
    assert len(lines) == 1, r.err
    assert "Traceback" not in r.err
    assert lines[0].startswith("rngassay: ")
    for n in needles:
        assert n in lines[0], (n, lines[0])
    return lines[0]


def test_missing_file(run_cli, tmp_path):
    one_line_error(run_cli("test", tmp_path / "nope.bin"), "nope.bin", "file not found")


def test_directory_is_not_a_file(run_cli, tmp_path):
    one_line_error(run_cli("test", tmp_path), "is a directory")


def test_unreadable_file(run_cli, tmp_path, monkeypatch):
    # root can read anything, so simulate the permission error the OS would raise
    p = tmp_path / "locked.bin"
    p.write_bytes(b"\0" * 64)
    import builtins

    real_open = builtins.open

    def fake_open(file, *a, **k):
        if str(file) == str(p):
            raise PermissionError(13, "Permission denied")
        return real_open(file, *a, **k)

    monkeypatch.setattr(builtins, "open", fake_open)
    one_line_error(run_cli("test", p), "locked.bin", "not readable")


def test_empty_file(run_cli, tmp_path):
    p = tmp_path / "empty.bin"
    p.write_bytes(b"")
    one_line_error(run_cli("test", p, "--budget", "1KiB"), "empty stream")


def test_empty_stdin(run_cli):
    one_line_error(run_cli("test", "-", stdin=b""), "empty stream", "stdin")


def test_empty_text(run_cli, tmp_path):
    p = tmp_path / "blank.txt"
    p.write_bytes(b"  \n\n  ")
    one_line_error(run_cli("test", p, "--format", "text"), "empty stream")


def test_stream_shorter_than_budget(run_cli, tmp_path):
    p = tmp_path / "short.bin"
    p.write_bytes(os.urandom(1000))
    line = one_line_error(run_cli("test", p, "--budget", "4KiB"), "4096 bytes needed", "1000 available")
    assert "smaller --budget" in line


def test_not_whole_words(run_cli, tmp_path):
    p = tmp_path / "odd.bin"
    p.write_bytes(os.urandom(1003))
    line = one_line_error(run_cli("test", p, "--format", "<u4"), "not a whole number", "3 bytes left over")
    assert "byte offset 1000" in line


def test_unparsable_text_token(run_cli, tmp_path):
    p = tmp_path / "u.txt"
    p.write_text("0.1 0.2\n0.3\n0.4 zebra 0.5\n")
    one_line_error(run_cli("test", p, "--format", "text"), "u.txt line 3", "'zebra'")


@pytest.mark.parametrize("tok", ["nan", "NaN", "inf", "-inf"])
def test_text_nan_inf(run_cli, tmp_path, tok):
    p = tmp_path / "u.txt"
    p.write_text(f"0.1\n0.2\n{tok}\n")
    line = one_line_error(run_cli("test", p, "--format", "text"), "line 3")
    assert ("NaN" in line) or ("infinity" in line)


@pytest.mark.parametrize("val", [np.nan, np.inf])
def test_binary_nan_inf(run_cli, tmp_path, val):
    a = np.full(100, 0.5)
    a[37] = val
    p = tmp_path / "u.f8"
    p.write_bytes(a.astype("<f8").tobytes())
    line = one_line_error(run_cli("test", p, "--format", "<f8"), "byte offset 296")
    assert ("NaN" in line) or ("infinity" in line)


@pytest.mark.parametrize("val", ["1.0e0", "1", "-0.25", "3.5"])  # "1.000" is a rounded value: test_text_tokens
def test_text_float_outside_unit_interval(run_cli, tmp_path, val):
    p = tmp_path / "u.txt"
    p.write_text(f"0.5 0.25\n{val}\n")
    one_line_error(run_cli("test", p, "--format", "text"), "line 2")


def test_binary_float_one_is_rejected(run_cli, tmp_path):
    a = np.full(64, 0.5, dtype="<f4")
    a[10] = 1.0
    p = tmp_path / "u.f4"
    p.write_bytes(a.tobytes())
    one_line_error(run_cli("test", p, "--format", "<f4"), "outside [0, 1)", "byte offset 40")


def test_integer_outside_range(run_cli, tmp_path):
    p = tmp_path / "dice.txt"
    p.write_text("1 2 3\n4 5 6\n7\n")
    one_line_error(run_cli("test", p, "--format", "text", "--range", "1:6"), "outside --range 1:6", "line 3")


def test_text_integers_without_range(run_cli, tmp_path):
    p = tmp_path / "dice.txt"
    p.write_text("3\n1\n6\n")
    one_line_error(run_cli("test", p, "--format", "text"), "without --range", "line 1")


def test_non_integer_with_range(run_cli, tmp_path):
    p = tmp_path / "dice.txt"
    p.write_text("3 1\n2.5\n")
    one_line_error(run_cli("test", p, "--format", "text", "--range", "1:6"), "as an integer", "line 2")


def test_command_not_found(run_cli):
    one_line_error(run_cli("test", "--command", "no-such-program-xyz --seed 1"), "command not found")


def test_command_exits_nonzero(run_cli):
    cmd = f"{sys.executable} -c \"import sys; sys.stdout.buffer.write(b'x'*10); sys.stderr.write('boom: seed missing'); sys.exit(3)\""
    one_line_error(run_cli("test", "--command", cmd, "--budget", "64KiB"), "status 3", "boom: seed missing")


def test_command_produces_nothing(run_cli):
    cmd = f"{sys.executable} -c pass"
    one_line_error(run_cli("test", "--command", cmd, "--budget", "64KiB"), "no output")


def test_command_ends_early(run_cli):
    cmd = f"{sys.executable} -c \"import sys; sys.stdout.buffer.write(bytes(100))\""
    one_line_error(run_cli("test", "--command", cmd, "--budget", "64KiB"), "ended after 100 bytes", "smaller --budget")


def test_python_spec_does_not_import(run_cli, tmp_path):
    p = tmp_path / "broken.py"
    p.write_text("import no_such_module_xyz\n")
    one_line_error(run_cli("test", "--python", f"{p}:make"), "cannot import", "ModuleNotFoundError")


def test_python_module_does_not_exist(run_cli):
    one_line_error(run_cli("test", "--python", "no_such_pkg_xyz.mod:make"), "cannot import")


def test_python_missing_attribute(run_cli, tmp_path):
    p = tmp_path / "gen.py"
    p.write_text("def other():\n    pass\n")
    one_line_error(run_cli("test", "--python", f"{p}:make"), "no attribute 'make'")


def test_python_wrong_return_type(run_cli, tmp_path):
    p = tmp_path / "gen.py"
    p.write_text("def make():\n    return 42\n")
    one_line_error(run_cli("test", "--python", f"{p}:make"), "returned int")


def test_python_draw_returns_wrong_type(run_cli, tmp_path):
    p = tmp_path / "gen.py"
    p.write_text("def make():\n    return lambda n: 'not bytes'\n")
    one_line_error(run_cli("test", "--python", f"{p}:make", "--budget", "64KiB"), "draw() returned str")


def test_unknown_format(run_cli, tmp_path):
    p = tmp_path / "x.bin"
    p.write_bytes(b"\0" * 16)
    one_line_error(run_cli("test", p, "--format", "i4"), "unknown format 'i4'")


@pytest.mark.parametrize("b", ["0", "-5MiB", "lots"])
def test_bad_budget(run_cli, tmp_path, b):
    p = tmp_path / "x.bin"
    p.write_bytes(b"\0" * 16)
    one_line_error(run_cli("test", p, f"--budget={b}"), "--budget")


def test_unknown_generator(run_cli):
    line = one_line_error(run_cli("test", "--gen", "quantum-foam"), "quantum-foam")
    assert "pcg64" in line  # the message lists known names


def test_unknown_generator_emit(run_cli):
    one_line_error(run_cli("emit", "quantum-foam", "--bytes", "1KiB"), "quantum-foam")


def test_bad_range(run_cli, tmp_path):
    p = tmp_path / "x.txt"
    p.write_text("1 2\n")
    one_line_error(run_cli("test", p, "--format", "text", "--range", "6:1"), "--range")


def test_two_sources(run_cli, tmp_path):
    one_line_error(run_cli("test", tmp_path / "a.bin", "--gen", "pcg64"), "more than one source")


def test_unknown_option_is_one_line(run_cli):
    one_line_error(run_cli("test", "--frobnicate"), "usage error")


def test_nothing_is_overwritten_on_error(run_cli, tmp_path):
    p = tmp_path / "odd.bin"
    data = os.urandom(1003)
    p.write_bytes(data)
    run_cli("test", p, "--format", "<u4")
    assert p.read_bytes() == data


def test_too_little_data_is_refused(run_cli, tmp_path):
    # below 64 KiB the checks cannot say anything useful: refuse rather than pass vacuously
    p = tmp_path / "tiny.bin"
    p.write_bytes(os.urandom(4096))
    one_line_error(run_cli("test", p), "too little data", "64 KiB")
    t = tmp_path / "few.txt"
    t.write_text("0.1 0.2 0.3 0.4\n")
    one_line_error(run_cli("test", t, "--format", "text"), "too little data")


def test_report_never_overwrites_the_input(run_cli, tmp_path):
    p = tmp_path / "data.bin"
    data = os.urandom(1 << 16)
    p.write_bytes(data)
    one_line_error(run_cli("test", p, "--json", p), "overwrite an input file")
    assert p.read_bytes() == data


def test_report_refuses_devices(run_cli, tmp_path):
    p = tmp_path / "data.bin"
    p.write_bytes(os.urandom(1 << 16))
    one_line_error(run_cli("test", p, "--json", "/dev/null"), "device, pipe or socket")
    assert os.path.exists("/dev/null") and not os.path.isfile("/dev/null")


def test_report_through_a_symlink_writes_the_target(run_cli, tmp_path):
    p = tmp_path / "data.bin"
    p.write_bytes(np.random.Generator(np.random.PCG64(4)).bytes(1 << 16))
    target = tmp_path / "real.json"
    target.write_text("{}")
    link = tmp_path / "link.json"
    link.symlink_to(target)
    r = run_cli("test", p, "--json", link, "--workers", "1", "-q")
    assert r.code in (0, 1)
    assert link.is_symlink() and '"schema"' in target.read_text()


def test_shell_without_command(run_cli, tmp_path):
    one_line_error(run_cli("test", "--gen", "pcg64", "--shell"), "--shell applies to --command only")


def test_python_generator_dying_mid_run(run_cli, tmp_path):
    p = tmp_path / "dying.py"
    p.write_text(
        "import numpy as np\n"
        "def make():\n"
        "    bg = np.random.PCG64(1)\n"
        "    state = {'n': 0}\n"
        "    def draw(n):\n"
        "        state['n'] += n\n"
        "        if state['n'] > 600 << 10:  # in the third of four segments\n"
        "            raise OSError('device gone')\n"
        "        return bg.random_raw(-(-n // 8)).astype('<u8')\n"
        "    return draw\n"
    )
    j = tmp_path / "partial.json"
    r = run_cli("test", "--python", f"{p}:make", "--budget", "1MiB", "--workers", "1", "--json", j)
    one_line_error(r, "device gone")
    import json

    d = json.loads(j.read_text())
    assert d["incomplete"] is True and d["checks"]  # what finished was filed, marked incomplete
