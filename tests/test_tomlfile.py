"""The shared TOML reader's error paths: one line naming the file, with tomllib's line and column."""

import pytest

from backbone.errors import BackboneError
from backbone.tomlfile import closest, read_toml


def test_reads_valid_toml(tmp_path):
    f = tmp_path / "ok.toml"
    f.write_text('name = "x"\n[table]\nvalue = 3\n')
    assert read_toml(f, "test file") == {"name": "x", "table": {"value": 3}}


def test_syntax_error_names_file_line_and_column(tmp_path):
    f = tmp_path / "bad.toml"
    f.write_text('name = "x"\nvalue = = 3\n')
    with pytest.raises(BackboneError, match=r"bad\.toml: not valid TOML: .*line 2, column") as exc:
        read_toml(f, "test file")
    assert "\n" not in str(exc.value)


def test_missing_file(tmp_path):
    with pytest.raises(BackboneError, match=r"missing\.toml: cannot read test file"):
        read_toml(tmp_path / "missing.toml", "test file")


def test_not_utf8(tmp_path):
    f = tmp_path / "latin.toml"
    f.write_bytes(b'name = "\xe9"\n')
    with pytest.raises(BackboneError, match="not UTF-8"):
        read_toml(f, "test file")


def test_closest_suggestion():
    assert closest("temprature_c", ["temperature_c", "solvent"]) == "temperature_c"
    assert closest("TAU_C_NS", ["tau_c_ns"]) == "tau_c_ns"
    assert closest("zzz", ["temperature_c"]) is None
