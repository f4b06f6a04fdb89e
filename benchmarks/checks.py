"""Throughput of every registered check on PCG64 data.

    python benchmarks/checks.py [--size 64MiB] [--family classic] [--key "runs up"] [--repeat 1]

For each registered check (all families, ``load_all()``) and each parameter set its
``default_params`` proposes for the data size, the check runs once on a small prefix (warm-up:
numba compilation or cache loading, cached tables) and is then timed on ~``--size`` bytes of
PCG64 output in the check's view (raw bytes -> view by ``rngassay.intake.views``, format ``u1``).
The table shows the input consumed (MB of raw bytes, 1 MB = 10^6 bytes), MB/s of input, and the
ratio of the check's time to one numpy read pass over the same view array (``arr.sum()``; for the
bits view, the packed bytes): "3.0x" means the check costs three read passes.  Checks on the
integers view get k = 6 (the input would declare it).
"""

from __future__ import annotations

import argparse
import re
import sys
import time

import numpy as np

INTEGER_K = 6  # categories for checks on the integers view
def parse_size(text: str) -> int:
    from rngassay.errors import InputError
    from rngassay.sizes import parse_size as _parse

    try:
        return _parse(text, "--size")
    except InputError as e:
        raise argparse.ArgumentTypeError(e.line()) from None


def view_array(raw: np.ndarray, fmt, view: str, params: dict):
    """(data argument for the check, the array a read pass is timed on), made as the battery makes them."""
    from rngassay.battery.run import ViewCache

    v = ViewCache(raw, fmt).get(view, int(params["k"]) if view == "integers" else None)
    if view == "bits":
        return v[0], v[0]
    if view == "integers":
        return v[0], v[0]
    return v, v


def best_time(fn, repeat: int) -> float:
    best = float("inf")
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t)
    return best


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--size", type=parse_size, default=64 << 20, help="input bytes per check (default 64MiB)")
    ap.add_argument("--family", default=None, help="only this family (classic, bits, transform, categorical)")
    ap.add_argument("--key", action="append", default=None, help="only this check key (repeatable)")
    ap.add_argument("--repeat", type=int, default=1, help="timed runs per check; the best is shown")
    args = ap.parse_args(argv)

    from rngassay.checks.catalog import load_all
    from rngassay.intake import views
    from rngassay.intake.formats import parse_format

    fmt = parse_format("u1")
    raw = np.random.Generator(np.random.PCG64(20240601)).bytes(args.size)
    raw = np.frombuffer(raw, dtype=np.uint8)
    warm = raw[: 1 << 20]
    specs = load_all()
    print(f"{'check':<58}{'input MB':>10}{'MB/s':>10}{'vs read':>9}")
    for key, spec in specs.items():
        if args.family and spec.family != args.family:
            continue
        if args.key and key not in args.key:
            continue
        if spec.view not in views.available_views(fmt):
            continue
        per = views.input_bytes_per_value(fmt, spec.view)
        n_avail = int(raw.size / per)
        extra = {}
        if spec.view == "integers":
            # categorical checks take k from the input declaration: benchmark a die (k = 6);
            # rejection sampling keeps fewer values than words
            extra = {"k": INTEGER_K}
            n_avail = int(views.as_integers(raw, fmt, INTEGER_K)[0].size)
        plist = [{**p, **extra} for p in spec.default_params(n_avail)]
        if not plist:
            print(f"{key:<58}{'(needs more data)':>29}")
            continue
        for params in plist:
            try:
                wparams = [{**p, **extra} for p in spec.default_params(int(warm.size / per) // 2)]
                wp = next((p for p in wparams if all(p.get(k) == v for k, v in params.items()
                                                       if k not in ("n", "n_bits", "n_words"))), None)
                if wp is not None:
                    wdata, _ = view_array(warm, fmt, spec.view, wp)
                    spec.func(wdata, **wp)
                data, arr = view_array(raw, fmt, spec.view, params)
                res = [None]

                def run():
                    res[0] = spec.func(data, **params)

                if wp is None:
                    run()  # warm-up on the full size
                el = best_time(run, args.repeat)
                base = best_time(lambda: arr.sum(), max(3, args.repeat))
            except Exception as exc:  # noqa: BLE001 - a benchmark reports and goes on
                print(f"{key:<58} error: {exc}")
                continue
            r = res[0]
            name = (r[0].name if isinstance(r, list) and r else getattr(r, "name", key)) or key
            used = spec.values_needed(params) * per
            print(f"{name[:57]:<58}{used / 1e6:>10.1f}{used / el / 1e6:>10.0f}{el / base:>8.1f}x")
            sys.stdout.flush()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
