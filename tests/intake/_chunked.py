"""A test helper shared by the intake tests: decode a whole buffer fed to a Decoder in pieces cut at ``cuts``."""

import numpy as np

from rngassay.intake.formats import Decoder


def decode_in_pieces(fmt, data: bytes, cuts=()) -> np.ndarray:
    dec = Decoder(fmt, "test")
    out, prev = [], 0
    for c in sorted(set(min(c, len(data)) for c in cuts)) + [len(data)]:
        out.append(dec.feed(data[prev:c]))
        prev = c
    out.append(dec.finish())
    return np.concatenate(out)
