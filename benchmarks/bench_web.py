"""The browser face under a bounded local load: the tolerance page and the solve step of the guided run
against the application's own trivial route (``/ping``), served the same way.

    python benchmarks/bench_web.py [--clients 4] [--requests 200] [--seconds 60]

One uvicorn server in its own process on a free loopback port (127.0.0.1 only), over a fresh register
with no accounts (the open mode of a loopback server). ``--clients`` threads each keep one connection
and send requests one after another, at most ``--requests`` per route and client and for at most
``--seconds`` per route in all, then stop. Per route: median and 95th-percentile latency and the
throughput, and each as a ratio to ``/ping`` (goal: at most 3x; issue 14). The tolerance page posts the
invented example of the form; the solve step posts the invented demo rotor's readings and builds its
work order preview (step "readings" -> "corrections").

Timings are evidence, not tests.
"""

from __future__ import annotations

import argparse
import http.client
import re
import socket
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path
from urllib.parse import urlencode

SERVER = """
import sys, uvicorn
from toolkit.register.store import open_register
from toolkit.web.app import create_app
reg = open_register(sys.argv[1])
uvicorn.run(create_app(reg, loopback=True), host="127.0.0.1", port=int(sys.argv[2]), log_level="warning",
            access_log=False)
"""


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class Client:
    def __init__(self, port: int):
        self.conn = http.client.HTTPConnection("127.0.0.1", port, timeout=30)
        self.cookie = ""
        page = self.request("GET", "/tolerance")
        self.token = re.search(r'name="csrf" value="([^"]+)"', page).group(1)

    def request(self, method: str, path: str, form: dict | None = None) -> str:
        headers = {"Cookie": self.cookie} if self.cookie else {}
        body = None
        if form is not None:
            body = urlencode(form)
            headers["Content-Type"] = "application/x-www-form-urlencoded"
        self.conn.request(method, path, body=body, headers=headers)
        response = self.conn.getresponse()
        text = response.read().decode("utf-8")
        cookie = response.getheader("set-cookie")
        if cookie:
            self.cookie = cookie.split(";", 1)[0]
        if response.status not in (200, 303):
            raise RuntimeError(f"{method} {path}: status {response.status}")
        return text


def _load(port: int, method: str, path: str, form_of, clients: int, requests: int, seconds: float) -> dict:
    pool = [Client(port) for _ in range(clients)]
    latencies: list[float] = []
    lock = threading.Lock()
    stop = time.monotonic() + seconds

    def work(client: Client) -> None:
        mine = []
        form = None if form_of is None else form_of(client.token)
        for _ in range(requests):
            if time.monotonic() > stop:
                break
            t0 = time.perf_counter()
            client.request(method, path, form)
            mine.append(time.perf_counter() - t0)
        with lock:
            latencies.extend(mine)

    threads = [threading.Thread(target=work, args=(c,)) for c in pool]
    start = time.perf_counter()
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    wall = time.perf_counter() - start
    latencies.sort()
    return {"n": len(latencies), "median_ms": 1000 * statistics.median(latencies),
            "p95_ms": 1000 * latencies[int(0.95 * (len(latencies) - 1))], "per_s": len(latencies) / wall}


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--clients", type=int, default=4)
    parser.add_argument("--requests", type=int, default=200)
    parser.add_argument("--seconds", type=float, default=60.0)
    args = parser.parse_args(argv)
    from toolkit.web.forms import PAGES
    from toolkit.web.run import example_values

    folder = Path(tempfile.mkdtemp())
    port = _free_port()
    server = subprocess.Popen([sys.executable, "-c", SERVER, str(folder / "register.sqlite3"), str(port)])
    try:
        deadline = time.monotonic() + 30
        while True:
            try:
                socket.create_connection(("127.0.0.1", port), timeout=1).close()
                break
            except OSError:
                if time.monotonic() > deadline or server.poll() is not None:
                    raise SystemExit("the server did not start")
                time.sleep(0.1)
        routes = [
            ("trivial route GET /ping", "GET", "/ping", None),
            ("tolerance page POST /tolerance", "POST", "/tolerance",
             lambda token: {"csrf": token, **PAGES["tolerance"].example}),
            ("solve step POST /run (readings -> corrections)", "POST", "/run",
             lambda token: {"csrf": token, "step": "runs", "go": "next", **example_values()}),
        ]
        results = {}
        for name, method, path, form in routes:
            _load(port, method, path, form, 1, 5, 10)  # warm-up
            results[name] = _load(port, method, path, form, args.clients, args.requests, args.seconds)
        base = results[routes[0][0]]
        print(f"{args.clients} clients on 127.0.0.1, up to {args.requests} requests each per route")
        for name, r in results.items():
            print(f"{name}: {r['n']} requests, median {r['median_ms']:.2f} ms ({r['median_ms'] / base['median_ms']:.2f}x), "
                  f"p95 {r['p95_ms']:.2f} ms ({r['p95_ms'] / base['p95_ms']:.2f}x), "
                  f"{r['per_s']:.1f}/s ({base['per_s'] / r['per_s']:.2f}x slower)")
    finally:
        server.terminate()
        server.wait(10)
    return 0


if __name__ == "__main__":
    sys.exit(main())
