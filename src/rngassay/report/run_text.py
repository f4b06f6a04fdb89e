"""The run's settings in words, for the HTML report's Run section: human labels and values (no Python
literals: yes/no for flags, lists and tables spelled out), and amounts with their unit said (bytes or
values; per check, per replicate or in all)."""

from __future__ import annotations

from typing import Any

from ..model import Report
from ..sizes import format_size

SOURCE_KINDS = {"file": "file", "stdin": "standard input", "command": "output of a command",
                "python": "Python factory", "builtin": "built-in generator", "seeds": "seed sweep",
                "derived": "values made by the run", "array": "values handed over in Python"}

# settings and source keys with a label of their own; others get their key in words ("block_seeds" ->
# "Block seeds")
LABELS = {
    "workers_used": "Worker processes",
    "segments": "Segments (one replicate of each check per segment)",
    "notable_factor": "Notable band",
    "multiple_testing": "Multiple testing",
    "declaration": "Declared law",
    "declaration_kind": "Kind of declaration",
    "values": "Values read",
    "pit": "Transform to uniforms",
    "pit_seed": "Seed of the randomised transform",
    "pit_battery": "Uniform battery on the transformed values",
    "outcomes": "Outcomes in the declared law",
    "executor": "Executor",
    "bytes_per_seed": "Bytes per seed",
    "sha256_of": "SHA-256 taken over",
    "seed_spec": "Seeds",
    "per_seed_checks": "Checks on each seed's stream",
    "interleave": "Streams interleaved",
    "shared_segments": "Checks share segments",
}
SKIP_SETTINGS = {"alpha"}  # shown once, as its own row


def words(key: str) -> str:
    """A label for a key: its own label, else the key in words."""
    if key in LABELS:
        return LABELS[key]
    t = str(key).replace("_", " ").strip()
    return t[:1].upper() + t[1:]


def human(v: Any, key: str = "") -> str:
    """A value in words: yes/no, "not set", numbers with separators (seeds and ids plain), lists joined,
    tables as "label: value" pairs; never a Python literal."""
    if v is None:
        return "not set"
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, int):
        return str(v) if "seed" in key or abs(v) < 10_000 else f"{v:,}"
    if isinstance(v, float):
        return f"{v:g}"
    if isinstance(v, (list, tuple)):
        return ", ".join(human(x, key) for x in v) if v else "none"
    if isinstance(v, dict):
        return "; ".join(f"{words(k).lower() if k not in LABELS else words(k)}: {human(x, k)}" for k, x in v.items()) \
            if v else "none"
    return str(v)


def amount(n: Any, unit: str, where: str) -> str:
    """An amount with its unit and scope, e.g. "4,194,304 bytes (4 MiB) in all"."""
    try:
        k = int(n)
    except (TypeError, ValueError):
        return human(n)
    size = f" ({format_size(k)})" if unit == "bytes" and k >= 1024 else ""
    return f"{k:,} {unit}{size} {where}".rstrip()


def run_rows(r: Report) -> list[tuple[str, str, bool]]:
    """(label, text, monospace) rows of the Run section."""
    src = dict(r.source or {})
    text = str(src.get("format", "")).startswith("text")
    kind = str(src.pop("kind", ""))
    rows: list[tuple[str, str, bool]] = [
        ("Source", SOURCE_KINDS.get(kind, kind or "unknown"), False),
        ("Name", str(src.pop("name", "")), True),
        ("Format", str(src.pop("format", "")), True),
    ]
    if "bytes_read" in src:
        rows.append(("Read", amount(src.pop("bytes_read"), "bytes", "in all"), False))
    if "values" in src:
        rows.append(("Values read", amount(src.pop("values"), "values", "in all"), False))
    if "sha256" in src:
        rows.append(("SHA-256 of what was read", str(src.pop("sha256")), True))
    rows += [(words(k), human(v, k), False) for k, v in src.items()]
    if r.command == "test":
        rows.append(("Budget", amount(r.budget_bytes, "values" if text else "bytes", "in all (the checks share it)"), False))
    elif r.command == "seeds":
        rows.append(("Budget", amount(r.budget_bytes, "bytes", "in all (every seed's stream)"), False))
    rows.append(("Alpha", f"{r.alpha:g} (family-wise false-alarm rate of the run, Holm's step-down)", False))
    settings = dict(r.settings or {})
    bf = settings.pop("notable_factor", None)
    if isinstance(bf, (int, float)):
        rows.append(("Notable band", f"Holm-adjusted p from alpha to {bf:g} \u00d7 alpha "
                     f"({r.alpha:g} to {bf * r.alpha:g})", False))
    pb = settings.pop("pit_battery", None)
    if isinstance(pb, dict):
        rows.append((words("pit_battery"), f"{human(pb.get('segments'))} segments; "
                     + amount(pb.get("bytes"), "bytes", "of transformed values (8 per value) in all"), False))
    rows += [(words(k), human(v, k), False) for k, v in settings.items() if k not in SKIP_SETTINGS]
    rows.append(("Elapsed", f"{r.elapsed_s:.2f} s", False))
    return rows
