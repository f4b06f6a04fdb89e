"""The library's error for bad input or usage; the command line turns it into a single line and exit code 2."""

from __future__ import annotations


class InputError(ValueError):
    """Bad input or usage: what is wrong, where, and what to do about it.

    A :class:`ValueError`, so library callers can catch it as one; it carries three parts:

    ``what``  -- the problem, e.g. "float outside [0, 1): 1.0"
    ``where`` -- the place, e.g. "data.txt line 12" or "stdin byte offset 4096" (may be empty)
    ``hint``  -- what the user can do, e.g. "remove the value or rescale the data" (may be empty)
    """

    def __init__(self, what: str, where: str = "", hint: str = ""):
        self.what = what
        self.where = where
        self.hint = hint
        super().__init__(self.line())

    def line(self) -> str:
        parts = [self.what]
        if self.where:
            parts[0] = f"{self.where}: {self.what}"
        if self.hint:
            parts.append(self.hint)
        return "; ".join(parts)


#: Largest --alpha of a graded run: the middle grade ("notable") reaches 10 alpha, which must stay below 1.
MAX_GRADED_ALPHA = 0.1


def check_alpha(alpha: float, upper: float = MAX_GRADED_ALPHA) -> None:
    """``--alpha`` must lie in (0, upper): one rule for every command (``upper`` 1 where there is no middle grade)."""
    if not (0 < alpha < upper):
        why = " (the notable grade reaches 10 times alpha)" if upper == MAX_GRADED_ALPHA else ""
        raise InputError(f"--alpha must be between 0 and {upper:g}{why}, got {alpha}", "", "e.g. --alpha 0.001")
