"""The one reader of files a person hands over (tracker/db/uploads.py), on its own: the CLI
and the interface both read through it, so a bad path reads the same from either."""

from __future__ import annotations

from pathlib import Path

import pytest

from tracker.db.uploads import read_typed_path, read_upload
from tracker.domain.errors import InputError


def test_a_file_is_read_whole_with_its_name(tmp_path: Path) -> None:
    path = tmp_path / "agreement.pdf"
    path.write_bytes(b"%PDF- an invented agreement")
    assert read_upload(path, "document") == {
        "filename": "agreement.pdf",
        "content": path.read_bytes(),
    }


def test_no_path_is_no_file() -> None:
    assert read_upload(None, "document") is None


@pytest.mark.parametrize("name", ["missing.jpg", ""])  # a missing file, then a folder
def test_a_path_naming_no_readable_file_is_one_line_naming_field_and_path(
    tmp_path: Path, name: str
) -> None:
    path = tmp_path / name
    with pytest.raises(InputError) as refused:
        read_typed_path(str(path), "photo", "type a path")
    error = refused.value
    assert (error.field, error.value) == ("photo", str(path))
    assert error.reason.startswith("cannot be read (")
    assert "\n" not in error.one_line()


def test_an_empty_field_says_what_to_type() -> None:
    with pytest.raises(InputError) as refused:
        read_typed_path("  ", "document", "type the path of the file to keep")
    assert (refused.value.field, refused.value.reason) == (
        "document",
        "type the path of the file to keep",
    )


def test_a_file_far_over_the_limit_is_refused_before_it_is_kept(tmp_path: Path) -> None:
    path = tmp_path / "big.tif"
    path.write_bytes(b"x" * 11)
    with pytest.raises(InputError, match="larger than 10 bytes"):
        read_upload(path, "photo", limit=10)


def test_a_home_folder_path_is_read_as_a_shell_reads_it(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("HOME", str(tmp_path))
    (tmp_path / "crown.png").write_bytes(b"png bytes")
    upload = read_typed_path("~/crown.png", "photo", "type a path")
    assert upload["content"] == b"png bytes"
