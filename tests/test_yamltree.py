"""Safe YAML reading: lines kept; duplicate keys, aliases, tags, tabs and bad bytes refused clearly."""
import time

import pytest

from recordkit.errors import Problems
from recordkit.yamltree import read_yaml


def read(data):
    problems = Problems()
    tree = read_yaml(data if isinstance(data, bytes) else data.encode(), "f.yaml", problems)
    return tree, [(p.source.line, p.message) for p in problems]


def test_lines_are_kept():
    tree, problems = read("# comment\na: 1\nb:\n  - x\n  - {c: 2019-03-02}\n")
    assert problems == []
    assert tree.key_lines == {"a": 2, "b": 3}
    assert tree["b"].item_lines == [4, 5]
    assert tree["b"][1] == {"c": "2019-03-02"}  # dates stay as written, for the model's strict parser


def test_duplicate_key_names_both_lines():
    _, problems = read("a: 1\nb: 2\na: 3\n")
    assert problems == [(3, "duplicate key 'a' (first at line 1)")]


def test_aliases_are_refused():
    _, problems = read("a: &x {k: 1}\nb: *x\n")
    assert len(problems) == 1 and "aliases" in problems[0][1]


def test_billion_laughs_is_refused_quickly():
    # the classic alias bomb: 9 levels of 9 references would expand to 10^9 items
    levels = ["a0: &a0 [lol, lol, lol, lol, lol, lol, lol, lol, lol]"]
    for i in range(1, 10):
        refs = ", ".join([f"*a{i - 1}"] * 9)
        levels.append(f"a{i}: &a{i} [{refs}]")
    start = time.perf_counter()
    _, problems = read("\n".join(levels) + "\n")
    assert problems and all("aliases" in message for _, message in problems)
    assert time.perf_counter() - start < 2.0  # generous bound; real time is milliseconds
    assert len(problems) < 100  # one per alias written, not per expansion


@pytest.mark.parametrize("text", [
    "a: !!python/object/apply:os.system ['echo hi']\n",
    "a: !!python/name:os.system\n",
    "a: !custom 1\n",
    "a: !!binary aGVsbG8=\n",
])
def test_code_and_custom_tags_are_refused(text):
    tree, problems = read(text)
    assert len(problems) == 1 and problems[0][0] == 1 and "not allowed" in problems[0][1]


def test_merge_keys_are_refused():
    _, problems = read("base: {a: 1}\nother:\n  <<: {a: 2}\n")
    assert problems == [(3, "keys must be plain words (no '<<' merges or complex keys)")]


def test_tab_indentation_is_explained():
    _, problems = read("a:\n\t- x\n")
    assert problems == [(2, "a tab character where YAML needs spaces; indent with spaces only")]


def test_syntax_error_has_a_line():
    _, problems = read("a: 1\nb: [1, 2\nc: 3\n")
    assert len(problems) == 1 and problems[0][0] >= 2 and problems[0][1].startswith("YAML syntax")


def test_not_utf8_names_the_line():
    _, problems = read(b"a: 1\nb: caf\xe9\n")
    assert problems == [(2, "not UTF-8 text (byte 0xe9 at offset 11); save the file as UTF-8")]


def test_byte_order_mark_is_accepted():
    tree, problems = read(b"\xef\xbb\xbfa: 1\n")
    assert problems == [] and tree == {"a": 1}


def test_two_documents_are_refused():
    _, problems = read("a: 1\n---\nb: 2\n")
    assert len(problems) == 1 and "one YAML document" in problems[0][1]


def test_huge_file_is_refused_without_parsing(monkeypatch):
    monkeypatch.setattr("recordkit.yamltree.MAX_FILE_BYTES", 100)
    _, problems = read("a: " + "x" * 200 + "\n")
    assert len(problems) == 1 and "limited to 100 bytes" in problems[0][1]


def test_control_character_names_its_line():
    # found by the fuzz suite: PyYAML's reader error has a position, not a line
    _, problems = read("a: 1\nb: x\x00y\n")
    assert problems == [(2, "the character U+0000 is not allowed in a record file (a control character?); "
                            "remove it")]
