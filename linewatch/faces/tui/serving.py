"""The screens in a browser: a small web server over textual-serve.

Each browser connection gets a screen process of its own (textual-serve runs the command with
Textual's web driver and relays the terminal over a websocket). Around it we add what a plant
needs: with a user file, nobody sees a screen before signing in (scrypt hashes, a random session
cookie, HttpOnly and SameSite=Strict); the websocket is refused to pages of another origin;
the screen process is told the signed-in user, the browser's address and whether acting is on
(`present.browser_session`), so it acts as that user or refuses. The pages are our own, with
nothing fetched from elsewhere.
"""

from __future__ import annotations

import asyncio
import logging
import secrets
import time
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any
from urllib.parse import urlsplit

import aiohttp_jinja2
import jinja2
from aiohttp import web
from textual_serve.app_service import AppService
from textual_serve.server import Server, to_int

from linewatch.domain.safe_text import visible
from linewatch.faces.users_file import UserList
from linewatch.present.browser_session import READ_ONLY_TITLE, BrowserSession

PAGES = Path(__file__).with_name("web_pages")
COOKIE = "linewatch_session"
SCREEN_GRACE = 10.0  # seconds a screen may take to quit when the server stops
SESSION_SECONDS = 12 * 3600.0  # a signed-in browser stays signed in for a long shift
REFUSED_PAUSE = 1.0  # seconds a refused sign-in waits before answering (slows guessing)
OPEN_PATHS = ("/sign-in", "/static/")
SECURITY_HEADERS = {
    "X-Frame-Options": "DENY",  # no page of another site may frame the screen and steer keys
    "Referrer-Policy": "no-referrer",
    "Cache-Control": "no-store",
    "X-Content-Type-Options": "nosniff",
}

log = logging.getLogger("linewatch.serve")


@dataclass(frozen=True, slots=True)
class SignedIn:
    user: str
    until: float


class SessionScreen(AppService):
    """One browser's screen process, started with the session's variables added."""

    def __init__(self, command: str, extra_env: dict[str, str], **kwargs: Any) -> None:
        super().__init__(command, **kwargs)
        self.extra_env = extra_env

    def _build_environment(self, width: int = 80, height: int = 24) -> dict[str, str]:
        env = super()._build_environment(width=width, height=height)
        env.update(self.extra_env)
        return env


class ScreenServer(Server):
    """textual-serve's server with sign-in, an origin check and the session's identity."""

    def __init__(
        self,
        command: str,
        *,
        host: str,
        port: int,
        title: str,
        users: UserList | None = None,
        allow_actions: bool = False,
        public_url: str | None = None,
        trust_forwarded: bool = False,
        session_env: dict[str, str] | None = None,
        say: Callable[[str], None] = print,
        clock: Callable[[], float] = time.time,
    ) -> None:
        super().__init__(command, host=host, port=port, title=title, public_url=public_url,
                         templates_path=PAGES)
        self.given_public_url = public_url
        self.users = users
        self.allow_actions = allow_actions and users is not None
        self.trust_forwarded = trust_forwarded
        self.session_env = dict(session_env or {})
        self.say = say
        self.clock = clock
        self.signed_in: dict[str, SignedIn] = {}
        self.screens_open = 0
        self.screens: set[SessionScreen] = set()

    # -- the web application ------------------------------------------------------------------
    def initialize_logging(self) -> None:
        logging.basicConfig(level=logging.WARNING, format="linewatch serve: %(message)s")

    async def _make_app(self) -> web.Application:
        app = web.Application(middlewares=[self._guard])
        aiohttp_jinja2.setup(app, loader=jinja2.FileSystemLoader(PAGES),
                             autoescape=jinja2.select_autoescape(default=True))
        app.add_routes([
            web.get("/", self.handle_index, name="index"),
            web.get("/ws", self.handle_websocket, name="websocket"),
            web.get("/sign-in", self.handle_sign_in_page),
            web.post("/sign-in", self.handle_sign_in),
            web.post("/logout", self.handle_sign_out),
            web.static("/static", self.statics_path, name="static"),
        ])
        app.on_startup.append(self.on_startup)
        app.on_shutdown.append(self.on_shutdown)
        return app

    async def on_shutdown(self, app: web.Application) -> None:
        """Stopping the server ends every browser's screen (SIGTERM: each quits the normal way
        and gives its collector lease up), so none goes on running without its browser."""
        processes = [s._process for s in self.screens if s._process is not None]
        for process in processes:
            if process.returncode is None:
                process.terminate()
        for process in processes:
            try:
                await asyncio.wait_for(process.wait(), SCREEN_GRACE)
            except TimeoutError:
                process.kill()

    async def on_startup(self, app: web.Application) -> None:
        mode = "acting as the signed-in user" if self.allow_actions else READ_ONLY_TITLE
        who = f"{len(self.users)} users may sign in" if self.users else "no sign-in"
        self.say(f"linewatch: serving {self.title} on http://{self.host}:{self.port}/ "
                 f"({mode}; {who}); Ctrl+C stops")

    @web.middleware
    async def _guard(self, request: web.Request,
                     handler: Callable[[web.Request], Any]) -> web.StreamResponse:
        """Sign-in first (with a user file), then the page; our headers on every answer."""
        if self.users is not None and not request.path.startswith(OPEN_PATHS) \
                and self.user_of(request) is None:
            if request.path == "/ws":
                raise web.HTTPUnauthorized(text="sign in first")
            raise web.HTTPFound("sign-in")
        response: web.StreamResponse = await handler(request)
        for key, value in SECURITY_HEADERS.items():
            response.headers.setdefault(key, value)
        return response

    # -- who is asking ------------------------------------------------------------------------
    def address_of(self, request: web.Request) -> str:
        """The browser's address: the peer's, or with --trust-forwarded the last address of
        X-Forwarded-For (the one the plant's proxy appended)."""
        if self.trust_forwarded:
            forwarded = request.headers.get("X-Forwarded-For", "")
            hops = [h.strip() for h in forwarded.split(",") if h.strip()]
            if hops:
                return visible(hops[-1])[:64]
        return request.remote or "unknown"

    def user_of(self, request: web.Request) -> str | None:
        """The signed-in user of the request's session cookie, if it is still valid."""
        token = request.cookies.get(COOKIE)
        if not token:
            return None
        session = self.signed_in.get(token)
        if session is None:
            return None
        if session.until < self.clock():
            del self.signed_in[token]
            return None
        return session.user

    def _secure(self, request: web.Request) -> bool:
        if self.given_public_url:
            return self.given_public_url.startswith("https:")
        if self.trust_forwarded and request.headers.get("X-Forwarded-Proto") == "https":
            return True
        return request.secure

    # -- pages --------------------------------------------------------------------------------
    async def handle_index(self, request: web.Request) -> web.StreamResponse:
        if self.given_public_url:
            split = urlsplit(self.given_public_url)
            scheme = "wss" if split.scheme == "https" else "ws"
            websocket_url = f"{scheme}://{split.netloc}{split.path.rstrip('/')}/ws"
        else:
            websocket_url = "ws"  # relative to the page, so a proxy's path prefix is kept
        user = self.user_of(request)
        mode = ("may act as " + user) if self.allow_actions and user else READ_ONLY_TITLE
        return aiohttp_jinja2.render_template("screen.html", request, {
            "title": visible(self.title), "static_url": "static/", "websocket_url": websocket_url,
            "font_size": to_int(request.query.get("fontsize", "16"), 16), "user": user,
            "mode": mode,
        })

    async def handle_sign_in_page(self, request: web.Request) -> web.StreamResponse:
        return self._sign_in_page(request)

    def _sign_in_page(self, request: web.Request, problem: str = "", user: str = "",
                      status: int = 200) -> web.StreamResponse:
        response = aiohttp_jinja2.render_template("sign_in.html", request, {
            "title": visible(self.title), "problem": problem, "user": user})
        response.set_status(status)
        return response

    async def handle_sign_in(self, request: web.Request) -> web.StreamResponse:
        if self.users is None:
            raise web.HTTPFound("./")
        form = await request.post()
        user = str(form.get("user", ""))[:64]
        password = str(form.get("password", ""))[:1024]
        users = self.users
        ok = await asyncio.get_running_loop().run_in_executor(None, users.check, user, password)
        address = self.address_of(request)
        if not ok:
            self.say(f"linewatch serve: sign-in refused for {visible(user)!r} from {address}")
            await asyncio.sleep(REFUSED_PAUSE)
            return self._sign_in_page(request, "That user name and password do not match.",
                                      user=visible(user), status=401)
        token = secrets.token_urlsafe(32)
        self.signed_in[token] = SignedIn(user, self.clock() + SESSION_SECONDS)
        self.say(f"linewatch serve: {user} signed in from {address}")
        response = web.HTTPFound("./")
        response.set_cookie(COOKIE, token, max_age=int(SESSION_SECONDS), httponly=True,
                            samesite="Strict", secure=self._secure(request), path="/")
        raise response

    async def handle_sign_out(self, request: web.Request) -> web.StreamResponse:
        token = request.cookies.get(COOKIE)
        if token:
            self.signed_in.pop(token, None)
        response = web.HTTPFound("sign-in" if self.users is not None else "./")
        response.del_cookie(COOKIE, path="/")
        raise response

    # -- the screen ---------------------------------------------------------------------------
    def _same_origin(self, request: web.Request) -> bool:
        """A websocket opened by one of our pages: its Origin names this host (or the public
        address). Browsers always send Origin on a websocket; a page of another site cannot
        open the screen with the signed-in user's cookie."""
        origin = request.headers.get("Origin")
        if origin is None:
            return True  # not a browser (a script with no cookie, refused above if need be)
        allowed = {request.host}
        if self.given_public_url:
            allowed.add(urlsplit(self.given_public_url).netloc)
        return urlsplit(origin).netloc in allowed

    async def handle_websocket(self, request: web.Request) -> web.WebSocketResponse:
        if not self._same_origin(request):
            raise web.HTTPForbidden(text="this screen opens only from its own page")
        user = self.user_of(request) if self.users is not None else None
        session = BrowserSession(address=self.address_of(request), user=user,
                                 actions=self.allow_actions)
        websocket = web.WebSocketResponse(heartbeat=15)
        width = to_int(request.query.get("width", "80"), 80)
        height = to_int(request.query.get("height", "24"), 24)
        screen: SessionScreen | None = None
        self.screens_open += 1
        self.say(f"linewatch serve: screen opened for {user or 'a browser'} from "
                 f"{session.address}")
        try:
            await websocket.prepare(request)
            screen = SessionScreen(
                self.command, {**self.session_env, **session.environment()},
                write_bytes=websocket.send_bytes, write_str=websocket.send_str,
                close=websocket.close, download_manager=self.download_manager,
            )
            await screen.start(width, height)
            self.screens.add(screen)
            try:
                await self._process_messages(websocket, screen)
            finally:
                await screen.stop()
        except asyncio.CancelledError:
            await websocket.close()
        except (OSError, RuntimeError, ValueError) as error:  # a browser gone mid-message
            log.warning("screen for %s ended: %s", session.address, error)
        finally:
            if screen is not None:
                self.screens.discard(screen)
                await screen.stop()
            self.screens_open -= 1
            self.say(f"linewatch serve: screen closed for {user or 'a browser'} from "
                     f"{session.address}")
        return websocket
