"""Defaults the command line shows in its help (kept apart so that ``rngassay --help`` loads no numerics)."""

#: Default seed of the randomised PIT of ``fit`` for discrete declarations (recorded in every report).
DEFAULT_PIT_SEED = 20240917
