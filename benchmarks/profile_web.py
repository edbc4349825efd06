"""Where a page's time goes: the browser face's application called in-process, in one thread, without a
server or a socket (a page's worker-thread call runs inline), so that cProfile sees the whole request.

    python benchmarks/profile_web.py [--route tolerance|run|ping] [--requests 300] [--profile] [--top 40]

Posts the same invented example as ``bench_web.py`` (the tolerance page's form; the solve step of the guided
run, readings -> corrections) ``--requests`` times after a warm-up, over a fresh register with no accounts,
and prints the mean milliseconds a request; with ``--profile`` it runs them again under cProfile and prints
the functions by cumulative and by own time. Timings are evidence, not tests; the load of a shared machine
moves them (quote ``uptime`` beside them).
"""

from __future__ import annotations

import argparse
import asyncio
import cProfile
import os
import pstats
import re
import sys
import tempfile
import time
from urllib.parse import urlencode


async def _inline(func, *args, **kwargs):
    return func(*args, **kwargs)


class InProcess:
    """Requests to the ASGI application in this thread, keeping the session cookie."""

    def __init__(self, app):
        self.app, self.cookie = app, b""

    async def call(self, method: str, path: str, form: dict | None = None) -> tuple[int, bytes]:
        body = urlencode(form).encode() if form else b""
        headers = [(b"host", b"127.0.0.1:8470")] + ([(b"cookie", self.cookie)] if self.cookie else [])
        if form:
            headers.append((b"content-type", b"application/x-www-form-urlencoded"))
        scope = {"type": "http", "asgi": {"version": "3.0"}, "http_version": "1.1", "method": method,
                 "scheme": "http", "path": path, "raw_path": path.encode(), "query_string": b"", "root_path": "",
                 "headers": headers, "client": ("127.0.0.1", 50000), "server": ("127.0.0.1", 8470), "state": {}}
        sent, out = False, {"status": 0, "body": b""}

        async def receive():
            nonlocal sent
            if sent:
                return {"type": "http.disconnect"}
            sent = True
            return {"type": "http.request", "body": body, "more_body": False}

        async def send(message):
            if message["type"] == "http.response.start":
                out["status"] = message["status"]
                for key, value in message["headers"]:
                    if key == b"set-cookie":
                        self.cookie = value.split(b";")[0]
            elif message["type"] == "http.response.body":
                out["body"] += message.get("body", b"")

        await self.app(scope, receive, send)
        return out["status"], out["body"]


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--route", choices=("tolerance", "run", "ping"), default="tolerance")
    parser.add_argument("--requests", type=int, default=300)
    parser.add_argument("--profile", action="store_true")
    parser.add_argument("--top", type=int, default=40)
    args = parser.parse_args(argv)

    import starlette.concurrency

    starlette.concurrency.run_in_threadpool = _inline  # the page's worker-thread call, in this thread
    from toolkit.register.store import open_register
    from toolkit.web.app import create_app
    from toolkit.web.forms import PAGES
    from toolkit.web.run import example_values

    folder = tempfile.mkdtemp()
    client = InProcess(create_app(open_register(os.path.join(folder, "register.sqlite3")), loopback=True))
    loop = asyncio.new_event_loop()
    _status, page = loop.run_until_complete(client.call("GET", "/tolerance"))
    token = re.search(r'name="csrf" value="([^"]+)"', page.decode("utf-8")).group(1)
    request = {"tolerance": ("POST", "/tolerance", {"csrf": token, **PAGES["tolerance"].example}),
               "run": ("POST", "/run", {"csrf": token, "step": "runs", "go": "next", **example_values()}),
               "ping": ("GET", "/ping", None)}[args.route]

    async def many(n: int) -> None:
        for _ in range(n):
            status, body = await client.call(*request)
            if status not in (200, 303):
                raise SystemExit(f"{args.route}: status {status}: {body[:300]!r}")

    loop.run_until_complete(many(20))  # warm-up: templates compiled, caches filled
    start, cpu = time.perf_counter(), time.process_time()
    loop.run_until_complete(many(args.requests))
    wall, cpu = time.perf_counter() - start, time.process_time() - cpu
    print(f"{args.route}: {1000 * wall / args.requests:.3f} ms a request, in-process (CPU "
          f"{1000 * cpu / args.requests:.3f} ms; mean of {args.requests})")
    if args.profile:
        profile = cProfile.Profile()
        profile.enable()
        loop.run_until_complete(many(args.requests))
        profile.disable()
        stats = pstats.Stats(profile, stream=sys.stdout)
        stats.sort_stats("cumulative").print_stats(args.top)
        stats.sort_stats("tottime").print_stats(args.top)
    return 0


if __name__ == "__main__":
    sys.exit(main())
