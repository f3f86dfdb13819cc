"""YAML loading: core-schema scalars (no YAML 1.1 traps), locations, duplicate keys, tags, encodings."""

import pytest

from margincheck.errors import InputError, Location
from margincheck.loading import load_document


def _load(tmp_path, text: str | bytes):
    path = tmp_path / "doc.yaml"
    path.write_bytes(text.encode("utf-8") if isinstance(text, str) else text)
    return load_document(path, "doc.yaml")


def test_yaml_1_1_words_stay_strings(tmp_path):
    document = _load(tmp_path, "on: yes\noff: no\ny: n\nt: 1:20\nd: 2026-12-01\noctal: 012\n")
    assert document.data == {"on": "yes", "off": "no", "y": "n", "t": "1:20", "d": "2026-12-01", "octal": 12}


def test_core_schema_scalars(tmp_path):
    document = _load(tmp_path, "a: true\nb: ~\nc: 0x1F\nd: 1.5e3\ne: .inf\n")
    assert document.data == {"a": True, "b": None, "c": 31, "d": 1500.0, "e": float("inf")}


def test_every_value_and_key_is_located(tmp_path):
    document = _load(tmp_path, "top:\n  items:\n    - name: x\n      value: 3 V\n")
    assert document.locations[("top", "items", 0, "value")] == Location(4, 14)
    assert document.key_locations[("top", "items", 0, "value")] == Location(4, 7)


def test_duplicate_key_names_both_lines(tmp_path):
    with pytest.raises(InputError, match=r'doc.yaml:3:1: a: duplicate key "a" \(first written at line 1\)'):
        _load(tmp_path, "a: 1\nb: 2\na: 3\n")


def test_python_tags_are_refused(tmp_path):
    with pytest.raises(InputError, match=r'doc.yaml:1:4: a: YAML tag "tag:yaml.org,2002:python/object'):
        _load(tmp_path, "a: !!python/object:os.system {}\n")


def test_custom_tags_are_refused(tmp_path):
    with pytest.raises(InputError, match=r'YAML tag "!volts" is not allowed'):
        _load(tmp_path, "a: !volts 5\n")


def test_non_utf8_is_located(tmp_path):
    with pytest.raises(InputError, match=r"doc.yaml:2:4: the file is not UTF-8 text"):
        _load(tmp_path, b"a: 1\nb: \xff\n")


def test_two_documents_are_refused(tmp_path):
    with pytest.raises(InputError, match=r"doc.yaml:2:1: not valid YAML: expected a single document"):
        _load(tmp_path, "a: 1\n---\nb: 2\n")


def test_self_referring_alias_is_refused(tmp_path):
    with pytest.raises(InputError, match="an alias refers to the node that contains it"):
        _load(tmp_path, "a: &x [*x]\n")


def test_sha256_is_of_the_raw_bytes(tmp_path):
    import hashlib

    document = _load(tmp_path, "a: 1\n")
    assert document.sha256 == hashlib.sha256(b"a: 1\n").hexdigest()
