"""Input generators shared by the fuzz tests and bench/reliability.py."""
from __future__ import annotations

import random
from pathlib import Path

from hypothesis import strategies as st

from .conftest import DEMO_RECORDS

# Text a person (or a bad tool) could leave in a record file.
SNIPPETS = ["\t", ": ", "- ", "{", "}", "[", "]", "&a ", "*a", "!!python/object:os.system ", "%YAML 1.1\n",
            "---\n", "...\n", "'", '"', "#", "|\n", ">\n", "? ", "<<: *a\n", "2026-02-30", "unknown", "null",
            "~", "\x00", "\ufeff", "é", "\r\n", " " * 3, "\n", "id: ../../etc", "kind: smoke_co", "1e309",
            "99999999999999999999999", "-", "yes", "no", "on", "0o17", "0x1F", ".inf", "2026-13-01"]


def demo_texts() -> dict[str, str]:
    return {str(p.relative_to(DEMO_RECORDS)): p.read_text(encoding="utf-8")
            for p in DEMO_RECORDS.rglob("*.yaml") if ".cache" not in p.parts}


def mutate(text: str, rng: random.Random, edits: int) -> str:
    """Structured damage: insert snippets, delete or duplicate lines, shift indentation, cut the file."""
    lines = text.splitlines(keepends=True)
    for _ in range(edits):
        choice = rng.randrange(6)
        if not lines:
            lines = [rng.choice(SNIPPETS)]
        i = rng.randrange(len(lines))
        if choice == 0:
            at = rng.randrange(len(lines[i]) + 1)
            lines[i] = lines[i][:at] + rng.choice(SNIPPETS) + lines[i][at:]
        elif choice == 1:
            del lines[i]
        elif choice == 2:
            lines.insert(i, lines[rng.randrange(len(lines))])
        elif choice == 3:
            lines[i] = (" " * rng.randint(0, 5)) + lines[i].lstrip(" ")
        elif choice == 4:
            lines = lines[: i + 1]
        else:
            words = lines[i].split(" ")
            j = rng.randrange(len(words))
            words[j] = rng.choice(SNIPPETS).strip() or words[j]
            lines[i] = " ".join(words)
    return "".join(lines)


def write_mutant(folder: Path, seed: int) -> None:
    rng = random.Random(seed)
    texts = demo_texts()
    name = rng.choice(sorted(texts))
    for other, text in texts.items():
        path = folder / other
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(mutate(text, rng, rng.randint(1, 6)) if other == name else text, encoding="utf-8")


yaml_scalars = st.one_of(st.text(max_size=20), st.integers(), st.floats(allow_nan=True), st.booleans(), st.none(),
                         st.dates().map(str))
