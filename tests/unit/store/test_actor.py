"""Who acts: the OS user and the SSH client's address, read from the standard OpenSSH variables
(SSH_CLIENT = "client-ip client-port server-port", SSH_CONNECTION = "client-ip client-port
server-ip server-port"; OpenSSH sshd(8) manual, ENVIRONMENT section)."""

from __future__ import annotations

import getpass

from linewatch.store.actor import Actor, os_user, ssh_client_address, who


def test_ssh_address_from_either_variable() -> None:
    assert ssh_client_address({"SSH_CLIENT": "192.0.2.7 51234 22"}) == "192.0.2.7"
    assert ssh_client_address({"SSH_CONNECTION": "2001:db8::5 40000 2001:db8::1 22"}) == (
        "2001:db8::5"
    )
    assert ssh_client_address({"SSH_CLIENT": ""}) is None
    assert ssh_client_address({}) is None


def test_actor_text() -> None:
    assert str(Actor("op", "192.0.2.7")) == "op@192.0.2.7"
    assert str(Actor("op")) == "op"
    assert who({}).user == os_user() == getpass.getuser()
    assert who({"SSH_CLIENT": "192.0.2.9 1 22"}).address == "192.0.2.9"
