"""The browser face: a Starlette application with server-rendered Jinja2 pages.

:func:`create_app` builds it over an open register. Sessions are cookies signed with a key kept in the
register (HttpOnly, SameSite=Strict, Secure behind a TLS proxy); every form carries the session's CSRF
token and a POST without the right one is refused (403) before anything else happens. Failed sign-ins are
rate-limited per address and per name. Without accounts, and only while listening on a loopback address,
the pages that compute are open to whoever is at this computer and nothing can be recorded (a record
needs a signed-in person: a sign-off carries who and when).
"""

from __future__ import annotations

import hmac
import json
import secrets
import shlex
import threading
import time
from collections import defaultdict, deque
from pathlib import Path

from toolkit.web import accounts as A

__all__ = ["create_app", "MAX_UPLOAD", "FAILED_LIMIT", "FAILED_WINDOW_S"]

#: Largest request body accepted (bytes): a planner sheet of a few thousand rows fits (common practice, no source).
MAX_UPLOAD = 8 * 1024 * 1024
#: Failed sign-ins allowed per address and per name within FAILED_WINDOW_S before further tries are refused.
FAILED_LIMIT = 5                 # common practice, no source
FAILED_WINDOW_S = 300.0          # common practice, no source
SESSION_HOURS = 12               # one shift and some (common practice, no source)
_SECRET_KEY = "web_session_key"
_HERE = Path(__file__).parent


class Failures:
    """Failed sign-ins per key (an address or a name) in a sliding window."""

    def __init__(self, limit: int = FAILED_LIMIT, window_s: float = FAILED_WINDOW_S, clock=time.monotonic):
        self.limit, self.window, self.clock = limit, window_s, clock
        self._seen: dict[str, deque] = defaultdict(deque)
        self._lock = threading.Lock()

    def _trim(self, key: str) -> deque:
        q = self._seen[key]
        while q and self.clock() - q[0] > self.window:
            q.popleft()
        return q

    def wait_s(self, *keys: str) -> float:
        """Seconds until a sign-in under ``keys`` may be tried again (0: now)."""
        with self._lock:
            waits = [self.window - (self.clock() - q[0]) for q in (self._trim(k) for k in keys)
                     if len(q) >= self.limit]
        return max(waits, default=0.0)

    def fail(self, *keys: str) -> None:
        with self._lock:
            for k in keys:
                self._trim(k).append(self.clock())

    def clear(self, *keys: str) -> None:
        with self._lock:
            for k in keys:
                self._seen.pop(k, None)


def _secret(reg) -> str:
    key = reg.setting(_SECRET_KEY)
    if not key:
        reg.set_setting(_SECRET_KEY, secrets.token_hex(32))
        key = reg.setting(_SECRET_KEY)
    return key


def create_app(reg, *, loopback: bool = True, tls_proxy: bool = False, failures: Failures | None = None,
               out=None):
    """The application over the open register ``reg``.

    out : the folder the work-order files of recorded jobs are written to (default ``counterpoise-orders``
    beside an SQLite register, else in the current folder); downloads are served from there only.
    loopback : whether the server listens on a loopback address only (then, while no account exists, the
    computing pages are open without signing in). tls_proxy : cookies marked Secure (the server sits behind
    a TLS reverse proxy).
    """
    from jinja2 import Environment, FileSystemLoader, select_autoescape
    from starlette.applications import Starlette
    from starlette.middleware import Middleware
    from starlette.middleware.sessions import SessionMiddleware
    from starlette.responses import HTMLResponse, PlainTextResponse, RedirectResponse, Response
    from starlette.routing import Mount, Route
    from starlette.staticfiles import StaticFiles

    from toolkit.web.forms import PAGES, fields_of, run_page

    # built once per application; each template is compiled once and kept (no file check per request: the
    # templates are part of the installed package)
    env = Environment(loader=FileSystemLoader(str(_HERE / "templates")), autoescape=select_autoescape(["html"]),
                      trim_blocks=True, lstrip_blocks=True, auto_reload=False)
    env.filters["num"] = _num
    from toolkit.web.groups import form_groups

    env.globals["form_groups"] = form_groups
    from toolkit.web.forms import field_html

    env.globals["field_html"] = field_html
    from toolkit.web.run import fields_html as run_fields

    env.globals["run_fields"] = run_fields
    from toolkit.web.diagrams import style_hash

    headers = dict(_SECURITY_HEADERS)  # the diagrams' own style element is allowed by its hash, no other
    headers["Content-Security-Policy"] = headers["Content-Security-Policy"].replace(
        "style-src 'self'", "style-src 'self' " + style_hash())
    if out is None:
        base = Path(reg.url.database).parent if reg.dialect == "sqlite" else Path.cwd()
        out = base / "counterpoise-orders"
    out = Path(out).resolve()
    failures = failures or Failures()
    state = {"accounts_at": 0.0, "accounts": None}
    state_lock = threading.Lock()

    def open_mode() -> bool:
        """No accounts and loopback only: the computing pages need no sign-in."""
        if not loopback:
            return False
        with state_lock:
            if time.monotonic() - state["accounts_at"] > 2.0 or state["accounts"] is None:
                state["accounts"] = A.count(reg)
                state["accounts_at"] = time.monotonic()
            return state["accounts"] == 0

    def current_user(request) -> dict | None:
        session = request.session
        name = session.get("user")
        if not name:
            return None
        account = A.find(reg, name)
        if account is None or account["changed"] != session.get("changed"):
            session.pop("user", None)
            return None
        return account

    def csrf_token(request) -> str:
        token = request.session.get("csrf")
        if not token:
            token = secrets.token_urlsafe(32)
            request.session["csrf"] = token
        return token

    def render(request, template: str, code: int = 200, **context) -> HTMLResponse:
        user = context.pop("user", None) if "user" in context else current_user(request)
        units = context.pop("units", None) or (user or {}).get("units") or request.session.get("units") or "metric"
        page = env.get_template(template).render(
            request=request, user=user, csrf=csrf_token(request), open_mode=open_mode(), units=units,
            pages=PAGES, **context)
        return HTMLResponse(page, status_code=code, headers=headers)

    async def form_of(request) -> dict:
        """The posted form, refused (403) without the session's CSRF token; bounded in size."""
        length = request.headers.get("content-length")
        if length is not None and (not length.isdigit() or int(length) > MAX_UPLOAD):
            raise _Refused(413, f"the upload is larger than {MAX_UPLOAD // (1024 * 1024)} MB")
        body = b""
        async for chunk in request.stream():
            body += chunk
            if len(body) > MAX_UPLOAD:
                raise _Refused(413, f"the upload is larger than {MAX_UPLOAD // (1024 * 1024)} MB")
        request._body = body
        form = await request.form(max_files=4, max_fields=200)
        expected = request.session.get("csrf")
        given = form.get("csrf")
        if not expected or not isinstance(given, str) or not hmac.compare_digest(given, expected):
            raise _Refused(403, "this form has expired or did not come from this page (security token "
                                "missing or wrong); reload the page and send it again")
        origin = request.headers.get("origin")
        if origin and origin != "null" and origin.split("://", 1)[-1] != request.headers.get("host", ""):
            raise _Refused(403, "this form was sent from another site; it was not accepted")
        return form

    def need_user(request, action: str | None = None) -> dict | None:
        """The signed-in person (None in open mode), refusing without a session or without the role."""
        user = current_user(request)
        if user is None and action is None and open_mode():
            return None
        if user is None:
            raise _Refused(401, "sign in first")
        if action is not None and not A.may(user["role"], action):
            raise _Refused(403, f"a {user['role']} may not {action}; this needs the role "
                                f"{' or '.join(A.MAY[action])}")
        return user

    # -- routes ----------------------------------------------------------------------------------------

    async def home(request):
        if current_user(request) is None and not open_mode():
            return RedirectResponse("/signin", status_code=303)
        return render(request, "home.html")

    async def ping(request):
        return PlainTextResponse("ok")

    async def signin_page(request):
        return render(request, "signin.html", next=_local(request.query_params.get("next", "/")))

    async def signin(request):
        form = await form_of(request)
        name = str(form.get("name", "")).strip()[:64]
        password = str(form.get("password", ""))
        nxt = _local(str(form.get("next", "/")))
        keys = ("addr:" + (request.client.host if request.client else "?"), "name:" + name.lower())
        wait = failures.wait_s(*keys)
        if wait > 0:
            return render(request, "signin.html", 429, name=name, next=nxt,
                          error=f"Too many failed sign-ins; try again in {int(wait) + 1} s.")
        from starlette.concurrency import run_in_threadpool

        account = await run_in_threadpool(A.authenticate, reg, name, password)
        if account is None:
            failures.fail(*keys)
            return render(request, "signin.html", 401, name=name, next=nxt,
                          error="Name or password not recognised.")
        failures.clear(*keys)
        request.session.clear()
        request.session.update({"user": account["name"], "changed": account["changed"],
                                "csrf": secrets.token_urlsafe(32), "since": int(time.time())})
        return RedirectResponse(nxt, status_code=303)

    async def signout(request):
        await form_of(request)
        request.session.clear()
        return RedirectResponse("/signin", status_code=303)

    async def units_choice(request):
        form = await form_of(request)
        need_user(request)
        units = str(form.get("units", ""))
        if units not in ("metric", "imperial"):
            raise _Refused(400, "units: choose metric or imperial")
        user = current_user(request)
        if user is not None:
            A.set_units(reg, user["name"], units)
            request.session["changed"] = A.find(reg, user["name"])["changed"]
        else:
            request.session["units"] = units
        return RedirectResponse(_local(str(form.get("next", "/"))), status_code=303)

    def calculator(slug: str):
        page = PAGES[slug]

        async def show(request):
            need_user(request)
            if request.method == "POST":
                form = await form_of(request)
                values = {f.name: str(form.get(f.name, "")) for f in fields_of(page)}
                units = str(form.get("units", "")) or None
                if units not in (None, "metric", "imperial"):
                    units = None
                from starlette.concurrency import run_in_threadpool

                # in a worker thread: the loop's socket calls (which release the GIL) then overlap the
                # computation on the second core; computing in the loop instead was slower under 4 clients
                # (bench_web, alternated three times: median 23-33 ms against 14-22 ms)
                outcome = await run_in_threadpool(run_page, page, values, units or _units(request))
                side = None
                if slug == "tolerance" and outcome.data is not None:
                    from toolkit.web.diagrams import side_view

                    side = side_view(outcome.data, outcome.data.get("units") or units or _units(request))
                return render(request, "calculator.html", 200 if not outcome.errors else 422, page=page,
                              fields=fields_of(page), values=values, outcome=outcome, units=units, side_view=side,
                              command=shlex.join(["counterpoise", *outcome.argv]),
                              result_json=None if outcome.data is None else _json_text(outcome.data))
            return render(request, "calculator.html", page=page, fields=fields_of(page), values=dict(page.example),
                          outcome=None)

        return show

    def _json_text(data: dict) -> str:
        """The result as the command line's ``--json`` prints it (two-space indent, text as written), made by
        orjson: the standard library's encoder took a fifth of the tolerance page's time."""
        import orjson

        try:
            return orjson.dumps(data, option=orjson.OPT_INDENT_2 | orjson.OPT_NON_STR_KEYS).decode("utf-8")
        except (TypeError, orjson.JSONEncodeError):  # e.g. an integer beyond 64 bits: the plain encoder
            return json.dumps(data, indent=2, ensure_ascii=False)

    def _units(request) -> str:
        user = current_user(request)
        return (user or {}).get("units") or request.session.get("units") or "metric"

    from toolkit.export.svg import font_face_css, font_files

    fonts = {path.name: path for path in font_files().values()}
    fonts_css = font_face_css(lambda name: "/fonts/" + name)

    async def fonts_sheet(request):
        return Response(fonts_css, media_type="text/css", headers={"Cache-Control": "max-age=86400"})

    async def font(request):
        path = fonts.get(request.path_params["name"])  # only the diagrams' own font files, by exact name
        if path is None:
            raise _Refused(404, "no such font")
        return Response(path.read_bytes(), media_type="font/ttf", headers={"Cache-Control": "max-age=86400"})

    from toolkit.web import register_pages

    pages_routes = register_pages.routes(reg=reg, render=render, form_of=form_of, need_user=need_user, out=out,
                                         refused=_Refused, headers=headers)

    routes = [
        *pages_routes,
        Route("/", home),
        Route("/ping", ping),
        Route("/fonts.css", fonts_sheet),
        Route("/fonts/{name}", font),
        Route("/signin", signin_page, methods=["GET"]),
        Route("/signin", signin, methods=["POST"]),
        Route("/signout", signout, methods=["POST"]),
        Route("/units", units_choice, methods=["POST"]),
        *[Route(f"/{slug}", calculator(slug), methods=["GET", "POST"]) for slug in PAGES],
        Mount("/static", StaticFiles(directory=str(_HERE / "static")), name="static"),
    ]

    async def refused(request, exc):
        if exc.status == 401 and request.method == "GET":
            return RedirectResponse("/signin?next=" + _quote(request.url.path), status_code=303)
        return render(request, "refused.html", exc.status, message=exc.message)

    async def not_found(request, exc):
        return render(request, "refused.html", getattr(exc, "status_code", 404),
                      message="no such page" if getattr(exc, "status_code", 404) == 404 else str(exc.detail))

    app = Starlette(routes=routes, exception_handlers={_Refused: refused, 404: not_found, 405: not_found},
                    middleware=[Middleware(SessionMiddleware, secret_key=_secret(reg),
                                           session_cookie="counterpoise_session", max_age=SESSION_HOURS * 3600,
                                           same_site="strict", https_only=tls_proxy)])
    app.state.register = reg
    app.state.failures = failures
    return app


class _Refused(Exception):
    def __init__(self, status: int, message: str):
        super().__init__(message)
        self.status, self.message = status, message


_SECURITY_HEADERS = {
    "X-Content-Type-Options": "nosniff",
    "X-Frame-Options": "DENY",
    "Referrer-Policy": "same-origin",
    "Content-Security-Policy": "default-src 'self'; img-src 'self' data:; style-src 'self'; script-src 'self'; "
                               "form-action 'self'; frame-ancestors 'none'",
}


def _num(value) -> str:
    """A number as the command line prints it (four significant figures, plain notation), '–' for none."""
    if value is None:
        return "–"
    from toolkit.units import format_number

    return format_number(float(value))


def _local(path: str) -> str:
    """``path`` if it is a path on this site, else ``/`` (a sign-in never sends a person elsewhere)."""
    if not path.startswith("/") or path.startswith("//") or "\\" in path or any(ord(c) < 32 for c in path):
        return "/"
    return path


def _quote(path: str) -> str:
    from urllib.parse import quote

    return quote(path, safe="/")
