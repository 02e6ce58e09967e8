"""Sheet information: TOML files (checked against the TOML v1.0.0 grammar) and option merging."""

import dataclasses

import pytest

from profiler.errors import ProfilerError
from profiler.io.sheetinfo import SHEET_INFO_KEYS, SheetInfo, merge, read_sheet_info

LONG_NAME = "Vellmoor valley upper reservoir telemetry relay, north-east ridge mast no. 2 (temporary)"


def _write(tmp_path, text, name="sheet.toml"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_reads_all_keys_and_keeps_text_whole(tmp_path):
    # TOML v1.0.0: basic strings, literal strings, multi-line basic strings with escapes.
    path = _write(tmp_path, f'''
project = "{LONG_NAME}"
document = 'VV-RF-001'
revision = "B"
prepared_by = "A. Planner"
checked_by = ""
organisation = "Vellmoor water board \\u00e9"
notes = """
Line one.
Line two with "quotes"."""
''')
    info = read_sheet_info(path)
    assert info.project == LONG_NAME  # not cut
    assert info.document == "VV-RF-001"
    assert info.organisation == "Vellmoor water board \u00e9"
    # TOML v1.0.0: a newline right after the opening """ is trimmed.
    assert info.notes == 'Line one.\nLine two with "quotes".'
    assert info.checked_by == ""


def test_missing_keys_stay_blank(tmp_path):
    info = read_sheet_info(_write(tmp_path, 'project = "P"\n'))
    assert info == SheetInfo(project="P")
    assert info.to_dict() == dict.fromkeys(SHEET_INFO_KEYS, "") | {"project": "P"}


def test_keys_are_the_issue_fields():
    assert SHEET_INFO_KEYS == ("project", "document", "revision", "prepared_by", "checked_by",
                               "organisation", "notes")
    with pytest.raises(dataclasses.FrozenInstanceError):
        SheetInfo().project = "x"


@pytest.mark.parametrize("text,match", [
    ('projekt = "P"\n', "unknown key 'projekt'"),
    ('revision = 2\n', "key 'revision' must be a quoted string, got int"),
    ('[project]\nname = "P"\n', "key 'project' must be a quoted string, got dict"),
    ('notes = ["a", "b"]\n', "key 'notes' must be a quoted string, got list"),
    ('project = "unterminated\n', "not valid TOML"),
    ('project = "P"\nproject = "Q"\n', "not valid TOML"),  # TOML v1.0.0: keys may not repeat
])
def test_bad_files_are_one_line_errors_naming_file_and_key(tmp_path, text, match):
    path = _write(tmp_path, text)
    with pytest.raises(ProfilerError, match=match) as info:
        read_sheet_info(path)
    assert str(path) in str(info.value)
    assert "\n" not in str(info.value)


def test_unreadable_and_non_utf8_files(tmp_path):
    with pytest.raises(ProfilerError, match="cannot read sheet information"):
        read_sheet_info(tmp_path / "missing.toml")
    path = tmp_path / "latin1.toml"
    path.write_bytes('project = "M\u00fchle"\n'.encode("latin-1"))
    with pytest.raises(ProfilerError, match="not UTF-8"):
        read_sheet_info(path)


def test_merge_options_win_when_given():
    base = SheetInfo(project="P", revision="A", notes="keep")
    merged = merge(base, revision="B", checked_by="C. Checker", project=None)
    assert merged == SheetInfo(project="P", revision="B", checked_by="C. Checker", notes="keep")
    assert merge(None, document="D") == SheetInfo(document="D")
    assert merge(base, notes="").notes == ""  # an explicit empty option clears the field
    assert base.revision == "A"  # the input is not changed


def test_merge_rejects_unknown_fields_and_non_strings():
    with pytest.raises(TypeError, match="projekt"):
        merge(SheetInfo(), projekt="x")
    with pytest.raises(TypeError, match="revision"):
        merge(SheetInfo(), revision=3)
