"""The browser user file: scrypt hashes checked against RFC 7914's published test vector, names
and bad lines refused with their file and line, and passwords never written."""

from __future__ import annotations

import base64
import stat
from pathlib import Path

import pytest

from linewatch.domain.errors import LinewatchError
from linewatch.faces.users_file import UserList, parse_line, remove_user, set_user

# RFC 7914 section 12, second vector: P="password", S="NaCl", N=1024, r=8, p=16, dkLen=64
RFC7914_HASH = bytes.fromhex(
    "fdbabe1c9d3472007856e7190d01e9fe7c6ad7cbc8237830e77376634b373162"
    "2eaf30d92e22a3886ff109279d9830dac727afb94a83ee6d8360cbdfa2cc0640")


def rfc_line(name: str = "ines") -> str:
    return (f"{name}:scrypt:1024:8:16:{base64.b64encode(b'NaCl').decode()}:"
            f"{base64.b64encode(RFC7914_HASH).decode()}")


def test_a_line_with_the_rfc_vector_accepts_its_password_only(tmp_path: Path) -> None:
    path = tmp_path / "users"
    path.write_text("# comment\n\n" + rfc_line() + "\n")
    users = UserList.load(path)
    assert users.check("ines", "password")
    assert not users.check("ines", "Password")
    assert not users.check("nobody", "password")


def test_set_and_remove_keep_hashes_only_readable_by_the_owner(tmp_path: Path) -> None:
    path = tmp_path / "users"
    assert set_user(path, "maria", "first-password")
    assert not set_user(path, "maria", "second-password")  # a new password, not a new user
    set_user(path, "tom.k", "tom-password")
    text = path.read_text()
    assert "password" not in text.split("\n", 1)[1]
    assert stat.S_IMODE(path.stat().st_mode) == 0o600
    users = UserList.load(path)
    assert users.check("maria", "second-password") and not users.check("maria", "first-password")
    remove_user(path, "maria")
    assert list(UserList.load(path).users) == ["tom.k"]
    with pytest.raises(LinewatchError, match="not in"):
        remove_user(path, "maria")


@pytest.mark.parametrize("name", ["", "a:b", "x\u001b[2J", "[bold]x", "-lead", "a" * 65])
def test_unusable_names_are_refused(tmp_path: Path, name: str) -> None:
    with pytest.raises(LinewatchError, match="not usable"):
        set_user(tmp_path / "users", name, "long-enough")


def test_a_short_password_is_refused(tmp_path: Path) -> None:
    with pytest.raises(LinewatchError, match="at least 8"):
        set_user(tmp_path / "users", "maria", "short")


@pytest.mark.parametrize("line, words", [
    ("maria:md5:1:2", "expected"),
    ("maria:scrypt:1000:8:1:TmFDbA==:" + "A" * 44, "power of 2"),
    ("maria:scrypt:1024:8:1:!!:" + "A" * 44, "unreadable"),
])
def test_bad_lines_name_their_file_and_line(tmp_path: Path, line: str, words: str) -> None:
    path = tmp_path / "users"
    path.write_text(rfc_line() + "\n" + line + "\n")
    with pytest.raises(LinewatchError, match=f"users:2: .*{words}"):
        UserList.load(path)
    with pytest.raises(LinewatchError):
        parse_line(line, "here")


def test_a_name_listed_twice_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "users"
    path.write_text(rfc_line() + "\n" + rfc_line() + "\n")
    with pytest.raises(LinewatchError, match="twice"):
        UserList.load(path)
