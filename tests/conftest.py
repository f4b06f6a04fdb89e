import io
import sys

import pytest

from rngassay.cli import main


class Run:
    def __init__(self, code, out, err):
        self.code, self.out, self.err = code, out, err


@pytest.fixture
def run_cli(capsys, monkeypatch):
    """Run the CLI in-process; stdin may be given as bytes."""

    def _run(*args, stdin: bytes | None = None):
        if stdin is not None:
            monkeypatch.setattr(sys, "stdin", io.TextIOWrapper(io.BufferedReader(io.BytesIO(stdin))))
        code = main([str(a) for a in args])
        cap = capsys.readouterr()
        return Run(code, cap.out, cap.err)

    return _run
