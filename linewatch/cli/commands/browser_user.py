"""`linewatch browser-user add|remove|list`: the people who may sign in to `linewatch serve`.

The password is asked twice on the terminal (never echoed, never an argument that `ps` would
show), or read from the first line of stdin with --password-stdin for scripts."""

from __future__ import annotations

import sys

from linewatch.cli.options import (
    BrowserUserAddOptions,
    BrowserUserListOptions,
    BrowserUserRemoveOptions,
)
from linewatch.domain.errors import LinewatchError
from linewatch.domain.safe_text import visible


def ask_password() -> str:
    """The new password, typed twice without echo."""
    import getpass

    if not sys.stdin.isatty():
        raise LinewatchError("no terminal to ask the password on: use --password-stdin")
    first = getpass.getpass("new password: ")
    if getpass.getpass("again: ") != first:
        raise LinewatchError("the two passwords differ; nothing was changed")
    return first


def run(options: BrowserUserAddOptions | BrowserUserRemoveOptions | BrowserUserListOptions
        ) -> int:
    from linewatch.faces import users_file

    if isinstance(options, BrowserUserListOptions):
        for name in users_file.UserList.load(options.users).users:
            print(name)
        return 0
    users_file.check_name(options.name)
    if isinstance(options, BrowserUserRemoveOptions):
        users_file.remove_user(options.users, options.name)
        print(f"linewatch: {options.name} removed from {visible(options.users)}")
        return 0
    password = (sys.stdin.readline().rstrip("\r\n") if options.password_stdin
                else ask_password())
    added = users_file.set_user(options.users, options.name, password)
    done = "added to" if added else "given a new password in"
    print(f"linewatch: {options.name} {done} {visible(options.users)}")
    return 0
