"""Hostile and broken input: every input either loads or gives file:line problems, quickly, with no traceback."""
import random
import re
import subprocess
import sys
import time
from datetime import date

import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from recordkit.errors import Problems
from recordkit.loader import load_records
from recordkit.yamltree import read_yaml

from .conftest import REPO, run_cli
from .fuzzing import SNIPPETS, write_mutant, yaml_scalars

AS_OF = date(2026, 12, 1)
LINE = re.compile(r"^.+?(:\d+)?: .+$")


def assert_clean(loaded):
    for problem in loaded.problems:
        assert LINE.match(str(problem)), str(problem)
        assert problem.source.line >= 0


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(seed=st.integers(0, 10**9))
def test_mutated_demo_records_load_or_report(tmp_path_factory, seed):
    folder = tmp_path_factory.mktemp("mutant")
    write_mutant(folder, seed)
    start = time.perf_counter()
    assert_clean(load_records(folder, AS_OF, cache=False))
    assert time.perf_counter() - start < 10


@settings(max_examples=150, deadline=None)
@given(text=st.lists(st.sampled_from(SNIPPETS + list("abc:-{}[] \n0129")), max_size=80).map("".join))
def test_random_yaml_text_never_raises(text):
    problems = Problems()
    read_yaml(text.encode("utf-8", "surrogatepass"), "f.yaml", problems)
    for problem in problems:
        assert problem.source.line >= 1


@settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(values=st.dictionaries(st.sampled_from(["id", "kind", "room", "power", "manufactured", "installed",
                                                "life_years", "removed", "listens_to", "threshold_dba",
                                                "corner_hz", "interconnected", "location"]),
                              st.one_of(yaml_scalars, st.lists(yaml_scalars, max_size=3)), max_size=8))
def test_any_device_field_values_load_or_report(tmp_path_factory, values):
    device = yaml.safe_dump([values], default_flow_style=True, allow_unicode=True).strip()
    text = ("property:\n  id: p\n  name: P\n  units:\n    - id: u\n      rooms: [{id: hall, level: 0, use: hallway}]\n"
            f"      devices: {device}\n")
    folder = tmp_path_factory.mktemp("fields")
    (folder / "p.yaml").write_text(text, encoding="utf-8")
    assert_clean(load_records(folder, AS_OF, cache=False))


def test_the_cli_never_shows_a_traceback_on_broken_records(tmp_path):
    for seed in range(8):
        folder = tmp_path / f"m{seed}"
        folder.mkdir()
        write_mutant(folder, seed * 7919)
        for command in (["check"], ["status", "--format", "json"]):
            result = run_cli(*command, "-r", str(folder), "--as-of", AS_OF.isoformat())
            assert "Traceback" not in result.stderr and result.returncode in (0, 1, 3), result.stderr[-500:]


def test_alias_bomb_file_is_refused_fast(tmp_path):
    levels = ["a0: &a0 [lol, lol, lol, lol, lol, lol, lol, lol, lol]"]
    levels += [f"a{i}: &a{i} [" + ", ".join([f"*a{i - 1}"] * 9) + "]" for i in range(1, 10)]
    (tmp_path / "bomb.yaml").write_text("\n".join(levels) + "\n")
    start = time.perf_counter()
    loaded = load_records(tmp_path, AS_OF, cache=False)
    assert time.perf_counter() - start < 2
    assert any("aliases" in p.message for p in loaded.problems)


def test_deep_nesting_is_refused_without_crashing(tmp_path):
    (tmp_path / "deep.yaml").write_text("events: " + "[" * 5000 + "]" * 5000 + "\n")
    run = subprocess.run([sys.executable, "-c", "from datetime import date; from recordkit.loader import "
                          "load_records; l = load_records(sys.argv[1], date(2026, 12, 1), cache=False); "
                          "print(len(l.problems))".replace("from datetime", "import sys; from datetime"),
                          str(tmp_path)], capture_output=True, text=True, cwd=REPO, timeout=60)
    assert run.returncode == 0, run.stderr[-800:]
    assert int(run.stdout) >= 1


def test_empty_and_comment_only_files(tmp_path):
    (tmp_path / "empty.yaml").write_text("")
    (tmp_path / "notes.yaml").write_text("# nothing here yet\n")
    messages = [str(p) for p in load_records(tmp_path, AS_OF, cache=False).problems]
    assert messages == [f"{tmp_path}/empty.yaml:1: file is empty; expected 'property:' and/or 'events:'"]


def test_ids_can_never_name_a_path_outside_the_site(tmp_path):
    for bad in ["../x", "/etc", "a/b", "..", "con", "nul", "com1", "a\\b", "A", "x" * 65, "-a", "a-"]:
        text = f"property:\n  id: {yaml.safe_dump(bad).splitlines()[0]}\n  name: P\n  units: []\n"
        (tmp_path / "p.yaml").write_text(text)
        messages = [p.message for p in load_records(tmp_path, AS_OF, cache=False).problems]
        assert any("bad id" in m for m in messages), (bad, messages)


def test_random_seeds_are_reproducible():
    a, b = random.Random(5), random.Random(5)
    from .fuzzing import demo_texts, mutate
    text = next(iter(demo_texts().values()))
    assert mutate(text, a, 5) == mutate(text, b, 5)
