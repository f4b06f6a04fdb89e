"""Sources: files, stdin pipes in any chunking, commands, Python factories, built-ins; byte accounting."""

import hashlib
import subprocess
import sys
import textwrap
import time

import numpy as np
import pytest

from rngassay.api import open_stream
from rngassay.errors import InputError
from rngassay.intake.sources import CommandSource, PythonSource, StdinSource
from rngassay.intake.stream import Stream


def test_file_sha256_and_byte_count(tmp_path):
    data = np.random.Generator(np.random.PCG64(1)).bytes(3 << 20)
    p = tmp_path / "d.bin"
    p.write_bytes(data)
    with open_stream(str(p), fmt="<u4") as s:
        v = s.read_values(500_000)
        info = s.info()
    assert v.size == 500_000
    assert info.bytes_read == 2_000_000
    # the digest names exactly the prefix that was read (hashlib, FIPS 180-4)
    assert info.sha256 == hashlib.sha256(data[:2_000_000]).hexdigest()


class Trickle:
    """A pipe that delivers its bytes in awkward pieces (raw stream: short reads)."""

    def __init__(self, data, sizes):
        self.data, self.sizes, self.i, self.pos = data, sizes, 0, 0

    def read(self, n):
        if self.pos >= len(self.data):
            return b""
        k = min(n, self.sizes[self.i % len(self.sizes)], len(self.data) - self.pos)
        self.i += 1
        out = self.data[self.pos : self.pos + k]
        self.pos += k
        return out


@pytest.mark.parametrize("sizes", [[1], [3, 7, 1], [4096], [5, 100_000]])
def test_stdin_any_chunk_sizes(sizes):
    data = np.random.Generator(np.random.PCG64(2)).bytes(20_000)
    s = Stream(StdinSource(Trickle(data, sizes)), "<u8")
    v = s.read_values(2500)
    assert v.astype("<u8").tobytes() == data


@pytest.mark.slow  # two real processes, the reader running the battery (~15 s)
def test_stdin_pipe_slow_writer(tmp_path):
    # a real pipe from a program that writes slowly, in odd pieces
    writer = textwrap.dedent(
        """
        import sys, time
        out = sys.stdout.buffer
        for i in range(100):
            out.write(bytes([i % 256]) * 777); out.flush(); time.sleep(0.005)
        """
    )
    reader = "from rngassay.api import assay; r = assay('-', budget=777*100); print(r.source['bytes_read'], r.source['sha256'])"
    p1 = subprocess.Popen([sys.executable, "-c", writer], stdout=subprocess.PIPE)
    out = subprocess.run([sys.executable, "-c", reader], stdin=p1.stdout, capture_output=True, timeout=60)
    p1.wait()
    assert out.returncode == 0, out.stderr
    expected = b"".join(bytes([i % 256]) * 777 for i in range(100))
    n, digest = out.stdout.split()
    assert int(n) == len(expected) and digest.decode() == hashlib.sha256(expected).hexdigest()


def test_command_is_stopped_once_enough_is_read():
    endless = f"{sys.executable} -c \"import sys\nwhile True: sys.stdout.buffer.write(bytes(65536))\""
    src = CommandSource(endless)
    t = time.time()
    s = Stream(src, "u1")
    assert s.read_values(1 << 20).size == 1 << 20
    s.close()
    assert src._p.poll() is not None  # the child has ended
    assert time.time() - t < 20


def test_command_without_shell_does_not_expand():
    s = Stream(CommandSource("echo $HOME"), "u1")
    v = s.read_values(5)
    s.close()
    assert v.tobytes() == b"$HOME"


def test_command_with_shell():
    s = Stream(CommandSource("printf abc | tr a-c x-z", shell=True), "u1")
    v = s.read_values(3)
    s.close()
    assert v.tobytes() == b"xyz"


def _factory_file(tmp_path, body):
    p = tmp_path / "userfactory.py"
    p.write_text(textwrap.dedent(body))
    return p


def test_python_bitgenerator_generator_and_draw_agree(tmp_path):
    p = _factory_file(
        tmp_path,
        """
        import numpy as np
        def bitgen(seed=5):
            return np.random.PCG64(seed)
        def gen(seed=5):
            return np.random.default_rng(np.random.PCG64(seed))
        def drawer(seed=5):
            bg = np.random.PCG64(seed)
            return lambda n: bg.random_raw(-(-n // 8)).astype('<u8')
        """,
    )
    outs = []
    for name in ("bitgen", "gen", "drawer"):
        with Stream(PythonSource(f"{p}:{name}"), "<u8") as s:
            outs.append(s.read_values(1000))
    ref = np.random.PCG64(5).random_raw(1000)
    for o in outs:
        assert np.array_equal(o, ref)


def test_python_module_spec(tmp_path, monkeypatch):
    pkg = tmp_path / "suppliergen"
    pkg.mkdir()
    (pkg / "__init__.py").write_text("")
    (pkg / "streams.py").write_text("import numpy as np\ndef make():\n    return np.random.SFC64(9)\n")
    monkeypatch.syspath_prepend(str(tmp_path))
    with Stream(PythonSource("suppliergen.streams:make"), "<u8") as s:
        v = s.read_values(10)
    assert np.array_equal(v, np.random.SFC64(9).random_raw(10))


def test_python_seed_is_passed(tmp_path):
    p = _factory_file(tmp_path, "import numpy as np\ndef make(seed):\n    return np.random.Philox(seed)\n")
    with Stream(PythonSource(f"{p}:make", seed=11), "<u8") as s:
        v = s.read_values(4)
    assert np.array_equal(v, np.random.Philox(11).random_raw(4))


def test_python_draw_returning_odd_sizes(tmp_path):
    p = _factory_file(
        tmp_path,
        """
        import itertools
        def make():
            c = itertools.count()
            return lambda n: bytes([next(c) % 256 for _ in range(min(n, 7))])
        """,
    )
    with Stream(PythonSource(f"{p}:make"), "u1") as s:
        v = s.read_values(300)
    assert v.tolist() == [i % 256 for i in range(300)]


def test_builtin_source_matches_emit(tmp_path):
    from rngassay.generators import make_generator

    with open_stream(gen="pcg64", seed=3) as s:
        v = s.read_values(4096)
    assert v.tobytes() == make_generator("pcg64", 3).read(4096).tobytes()
