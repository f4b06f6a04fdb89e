import io
import sys

import pytest

from rngassay.cli import main


class Run:
    def __init__(self, code, out, err):
        self.code, self.out, self.err = code, out, err


def _stop_handlers() -> dict:
    import signal

    return {s: signal.getsignal(getattr(signal, s)) for s in ("SIGINT", "SIGTERM", "SIGHUP") if hasattr(signal, s)}


_ORIGINAL_STOP_HANDLERS = _stop_handlers()  # as this test process found them


def _set_stop_handlers(handlers: dict) -> None:
    import signal

    for s, h in handlers.items():
        signal.signal(getattr(signal, s), h if h is not None else signal.SIG_DFL)


@pytest.fixture(autouse=True)
def _signal_handlers_restored():
    """Every test starts and ends with the stop-signal handlers this test process started with: the command
    line, run in-process, leaves stop signals ignored after it was stopped (by design: it is about to exit), and
    no test should depend on which test ran before it in the same worker. (A process started as a background
    job of a non-interactive shell starts with SIGINT ignored; that is what it keeps.)"""
    _set_stop_handlers(_ORIGINAL_STOP_HANDLERS)
    yield
    _set_stop_handlers(_ORIGINAL_STOP_HANDLERS)


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


# tests/test_fit_*.py are edited elsewhere; their slow tests are marked here, by node id. These two run the
# fit battery on 2^23 normal variates (~7 s each): power and no false alarm at the size the fit brief requires.
# The fast run keeps the odds power tests of that file.
_SLOW_BY_NODE_ID = {
    "tests/test_fit_power.py::test_normal_with_tails_cut_at_4_fails_within_2_23_variates",
    "tests/test_fit_power.py::test_sound_normal_passes_at_2_23_variates",
}


def pytest_collection_modifyitems(config, items):
    for item in items:
        if item.nodeid in _SLOW_BY_NODE_ID:
            item.add_marker(pytest.mark.slow)
