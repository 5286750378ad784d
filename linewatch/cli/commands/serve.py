"""`linewatch serve`: the line's screen (or the plant board) in web browsers.

Each browser gets a screen process of its own: `linewatch watch -c CONFIG` for a line (a
viewer of the store while the line's collector runs, as a second `watch` would be), or the
plant board. Everything a browser may do is decided here, before anything is served: the user
file is read (a bad one stops the server with its file and line), acting needs it, and the
address to listen on is checked."""

from __future__ import annotations

import ipaddress
import shlex
import sys
from pathlib import Path

from linewatch.cli.options import ServeOptions
from linewatch.domain.errors import LinewatchError
from linewatch.domain.safe_text import visible


def parse_bind(bind: str) -> tuple[str, int]:
    """`HOST:PORT` (`[v6]:PORT` for IPv6) as host and port."""
    host, sep, port_text = bind.rpartition(":")
    if not sep or not host:
        raise LinewatchError(f"--bind must be HOST:PORT, e.g. 127.0.0.1:8765, got {bind!r}")
    if host.startswith("[") and host.endswith("]"):
        host = host[1:-1]
    try:
        port = int(port_text)
    except ValueError:
        raise LinewatchError(f"--bind: {port_text!r} is not a port number") from None
    if not 0 < port < 65536:
        raise LinewatchError(f"--bind: the port must be 1 to 65535, got {port}")
    return host, port


def is_loopback(host: str) -> bool:
    """Whether only this machine can reach `host`."""
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


def screen_command(options: ServeOptions) -> tuple[list[str], dict[str, str], str]:
    """The command each browser's screen runs, the variables it gets, and the page's title."""
    base = [sys.executable, "-m", "linewatch"]
    if options.config is not None:
        from linewatch.config.loading import load_config

        config_path = Path(options.config).expanduser().resolve()
        load_config(str(config_path))  # a bad config is told now, not in each browser
        argv = [*base, "watch", "-c", str(config_path)]
        if options.state_dir:
            argv += ["--state-dir", str(Path(options.state_dir).expanduser().resolve())]
        name = config_path.stem if config_path.stem != "linewatch" else config_path.parent.name
        return argv, {}, f"linewatch · {name}"
    from linewatch.plant.url import ENV_URL, plant_url

    # the URL goes in the screen's environment, never on a command line `ps` would show
    url = options.plant or plant_url(None) or ""
    if not url:
        raise LinewatchError(f"--plant needs the central database's URL, or {ENV_URL} set")
    return [*base, "plant", "board"], {ENV_URL: url}, "linewatch · plant"


def run(options: ServeOptions) -> int:
    host, port = parse_bind(options.bind)
    users = None
    if options.users:
        from linewatch.faces.users_file import UserList

        users = UserList.load(options.users)
        if not len(users):
            raise LinewatchError(f"{visible(options.users)} lists nobody: add a user with "
                                 f"`linewatch browser-user add NAME --users {options.users}`")
    argv, env, title = screen_command(options)
    if not is_loopback(host) and users is None:
        print(f"linewatch: warning: serving on {host} to anyone who can reach it, without "
              "sign-in (read-only); see --users", file=sys.stderr)
    from linewatch.faces.tui.serving import ScreenServer

    server = ScreenServer(
        "exec " + shlex.join(argv), host=host, port=port, title=title, users=users,
        allow_actions=options.allow_actions, public_url=options.public_url,
        trust_forwarded=options.trust_forwarded, session_env=env,
        say=lambda line: print(line, flush=True),
    )
    server.serve()
    return 0
