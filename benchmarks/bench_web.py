"""The browser face under a bounded local load: the tolerance page and the solve step of the guided run
against the application's own trivial route (``/ping``), served the same way.

    python benchmarks/bench_web.py [--clients 4] [--requests 200] [--seconds 60] [--rounds 5] [--vary]
                                   [--batch-rotors 1000] [--batch-runs 1]

One uvicorn server in its own process on a free loopback port (127.0.0.1 only), over a fresh register
with no accounts (the open mode of a loopback server). ``--clients`` threads each keep one connection
and send requests one after another, at most ``--requests`` per route and client and for at most
``--seconds`` per route in all, then stop; the routes take turns in ``--rounds`` rounds, so that the other
load of a shared machine falls on all of them alike. Per route: median and 95th-percentile latency and the
throughput, and each as a ratio to ``/ping`` (goal: at most 3x; issue 14). The tolerance page posts the
invented example of the form; the solve step posts the invented demo rotor's readings and builds its
work order preview (step "readings" -> "corrections"). With ``--vary`` each request changes the rotor (its
mass and centre of mass; the run's first reading), so that the side view's cache of drawn geometries is
missed as a shop with many different rotors would miss it.

Then a planner batch of ``--batch-rotors`` invented rotors (0: none) through the browser upload against the
command line's ``batch`` on the same sheet, alternately, ``--batch-runs`` times each (goal: the upload at most
1.3x; issue 14). The command line is timed as ``benchmarks/bench_batch.py`` times it, in a child process from
its first import to its exit status; the upload from the POST of the sheet to the page's state saying
"finished" (polled every 0.2 s, as a person's page does every second), and again with the orders' zip
downloaded. The upload runs on a second server whose register has one planner account (a batch needs a
signed-in planner).

Timings are evidence, not tests.
"""

from __future__ import annotations

import argparse
import csv
import http.client
import json
import math
import os
import secrets
import re
import shutil
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
    def __init__(self, port: int, first: str = "/tolerance"):
        self.conn = http.client.HTTPConnection("127.0.0.1", port, timeout=120)
        self.cookie = ""
        self.location = None
        page = self.request("GET", first).decode("utf-8")
        self.token = re.search(r'name="csrf" value="([^"]+)"', page).group(1)

    def request(self, method: str, path: str, form: dict | None = None, body: bytes | None = None,
                content_type: str = "application/x-www-form-urlencoded") -> bytes:
        headers = {"Cookie": self.cookie} if self.cookie else {}
        if form is not None:
            body = urlencode(form).encode("ascii")
        if body is not None:
            headers["Content-Type"] = content_type
        self.conn.request(method, path, body=body, headers=headers)
        response = self.conn.getresponse()
        data = response.read()
        cookie = response.getheader("set-cookie")
        if cookie:
            self.cookie = cookie.split(";", 1)[0]
        self.location = response.getheader("location")
        if response.status not in (200, 303):
            raise RuntimeError(f"{method} {path}: status {response.status}: {data[:300]!r}")
        return data


def _load(port: int, method: str, path: str, form_of, clients: int, requests: int, seconds: float,
          first: int = 0) -> dict:
    pool = [Client(port) for _ in range(clients)]
    latencies: list[float] = []
    lock = threading.Lock()
    stop = time.monotonic() + seconds

    def work(client: Client, k: int) -> None:
        mine = []
        for i in range(requests):
            if time.monotonic() > stop:
                break
            form = None if form_of is None else form_of(client.token, first + k * requests + i)
            t0 = time.perf_counter()
            client.request(method, path, form)
            mine.append(time.perf_counter() - t0)
        with lock:
            latencies.extend(mine)

    threads = [threading.Thread(target=work, args=(c, k)) for k, c in enumerate(pool)]
    start = time.perf_counter()
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    wall = time.perf_counter() - start
    return {"latencies": latencies, "wall": wall}


def _summary(runs: list[dict]) -> dict:
    """Median and 95th percentile of every latency of ``runs``, and the requests per second of their wall time."""
    latencies = sorted(x for r in runs for x in r["latencies"])
    return {"n": len(latencies), "median_ms": 1000 * statistics.median(latencies),
            "p95_ms": 1000 * latencies[int(0.95 * (len(latencies) - 1))],
            "per_s": len(latencies) / sum(r["wall"] for r in runs)}


def _serve(folder: Path, accounts=()) -> tuple[subprocess.Popen, int]:
    """A server over a fresh register in ``folder`` (with ``accounts``: (name, role, password)), listening."""
    from toolkit.register.store import open_register
    from toolkit.web import accounts as A

    where = folder / "register.sqlite3"
    reg = open_register(str(where))
    for name, role, password in accounts:
        A.add(reg, name, role, password)
    reg.close()
    port = _free_port()
    server = subprocess.Popen([sys.executable, "-c", SERVER, str(where), str(port)])
    deadline = time.monotonic() + 60
    while True:
        try:
            socket.create_connection(("127.0.0.1", port), timeout=1).close()
            return server, port
        except OSError:
            if time.monotonic() > deadline or server.poll() is not None:
                server.kill()
                raise SystemExit("the server did not start")
            time.sleep(0.1)


def _stop(server: subprocess.Popen) -> None:
    server.terminate()
    try:
        server.wait(10)
    except subprocess.TimeoutExpired:
        server.kill()
        server.wait(10)


# -- a planner batch through the upload ----------------------------------------------------------------

def upload_sheet(path: Path, rotors: int, seed: int = 11) -> Path:
    """A planner sheet (.csv) of ``rotors`` invented rotors: the rows of examples/planner.csv that hold the
    rotor in their own columns (an upload refuses a row naming a job file), with their own order numbers and
    readings varied."""
    from bench_batch import planner_rows

    header, rows = planner_rows(rotors, seed, "WEB", own_columns_only=True)
    with path.open("w", encoding="utf-8", newline="") as handle:
        csv.writer(handle).writerows([header, *rows])
    return path


def _multipart(fields: dict, name: str, filename: str, data: bytes) -> tuple[bytes, str]:
    boundary = "cpbench" + secrets.token_hex(12)
    parts = [f'--{boundary}\r\nContent-Disposition: form-data; name="{k}"\r\n\r\n{v}\r\n'.encode()
             for k, v in fields.items()]
    parts.append(f'--{boundary}\r\nContent-Disposition: form-data; name="{name}"; filename="{filename}"\r\n'
                 f"Content-Type: text/csv\r\n\r\n".encode() + data + b"\r\n")
    return b"".join(parts) + f"--{boundary}--\r\n".encode(), f"multipart/form-data; boundary={boundary}"


def _cpu_s(pid: int) -> float:
    """User + system CPU seconds of process ``pid`` so far (Linux /proc; NaN elsewhere)."""
    try:
        fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
        return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")
    except (OSError, ValueError, IndexError):
        return math.nan


def _upload(port: int, sheet: Path) -> tuple[float, float, dict]:
    """Sign in as the planner, upload ``sheet``; seconds to "finished", seconds with the zip downloaded, state."""
    client = Client(port, "/signin")
    client.request("POST", "/signin", {"csrf": client.token, "name": "planner", "password": PASSWORD,
                                       "next": "/planner"})
    page = client.request("GET", "/planner").decode("utf-8")
    token = re.search(r'name="csrf" value="([^"]+)"', page).group(1)
    body, kind = _multipart({"csrf": token, "paper": ""}, "sheet", sheet.name, sheet.read_bytes())
    start = time.perf_counter()
    client.request("POST", "/planner", body=body, content_type=kind)
    where = client.location
    while True:
        state = json.loads(client.request("GET", where + "/state"))
        if state["finished"]:
            break
        time.sleep(0.2)
    finished = time.perf_counter() - start
    archive = client.request("GET", where + "/orders.zip")
    with_zip = time.perf_counter() - start
    if state["error"] or not archive.startswith(b"PK"):
        raise SystemExit(f"the upload failed: {state['error'] or 'no zip'}")
    return finished, with_zip, state


PASSWORD = "bench-" + secrets.token_hex(8)  # an invented account of the benchmark's own register


def time_upload(rotors: int, runs: int) -> None:
    from bench_batch import CHILD_BATCH, _child, _installed

    print(f"toolkit imported from {_installed()}")
    folder = Path(tempfile.mkdtemp())
    sheet = upload_sheet(folder / "planner.csv", rotors)
    (folder / "server").mkdir()
    server, port = _serve(folder / "server", [("planner", "planner", PASSWORD)])
    cli, cli_cpu, web, web_zip, web_cpu, state = [], [], [], [], [], {}
    try:
        _child(CHILD_BATCH, str(sheet), str(folder / "cli"))  # warm-up of the files' caches
        for k in range(runs):
            elapsed, cpu, _peak, _queued = _child(CHILD_BATCH, str(sheet), str(folder / "cli"))
            cli.append(elapsed)
            cli_cpu.append(cpu)
            before = _cpu_s(server.pid)
            finished, with_zip, state = _upload(port, sheet)
            web_cpu.append(_cpu_s(server.pid) - before)
            web.append(finished)
            web_zip.append(with_zip)
            print(f"  run {k + 1}: counterpoise batch {elapsed:.2f} s (CPU {cpu:.2f} s); upload to finished "
                  f"{finished:.2f} s, with the zip {with_zip:.2f} s (server CPU {web_cpu[-1]:.2f} s)")
    finally:
        _stop(server)
        shutil.rmtree(folder, ignore_errors=True)
    a, b, c = statistics.median(cli), statistics.median(web), statistics.median(web_zip)
    ca, cb = statistics.median(cli_cpu), statistics.median(web_cpu)
    print(f"planner batch of {rotors:,} invented rotors ({state.get('orders')} files, {state.get('failed')} rows "
          f"failed), median of {runs}:")
    print(f"  wall: counterpoise batch {a:.2f} s; upload to finished {b:.2f} s ({b / a:.2f}x); with the zip "
          f"downloaded {c:.2f} s ({c / a:.2f}x); goal at most 1.3x: {'met' if c / a <= 1.3 else 'MISSED'}")
    print(f"  CPU: counterpoise batch {ca:.2f} s; the server for the upload, its polls and the zip {cb:.2f} s "
          f"({cb / ca:.2f}x)")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--clients", type=int, default=4)
    parser.add_argument("--requests", type=int, default=200)
    parser.add_argument("--seconds", type=float, default=60.0)
    parser.add_argument("--rounds", type=int, default=5,
                        help="the routes take turns this many times, each with its share of requests and seconds")
    parser.add_argument("--vary", action="store_true",
                        help="every request a different rotor (mass and centre of mass; the run's first reading), "
                             "so that no cache of a pure function of the inputs is hit")
    parser.add_argument("--batch-rotors", type=int, default=1000, help="rotors in the upload batch (0: none)")
    parser.add_argument("--batch-runs", type=int, default=1)
    parser.add_argument("--no-pages", action="store_true", help="only the upload batch")
    args = parser.parse_args(argv)
    if not args.no_pages:
        time_pages(args)
    if args.batch_rotors > 0:
        time_upload(args.batch_rotors, args.batch_runs)
    return 0


def time_pages(args) -> None:
    from toolkit.web.forms import PAGES
    from toolkit.web.run import example_values

    folder = Path(tempfile.mkdtemp())
    server, port = _serve(folder)
    try:
        tolerance, run = dict(PAGES["tolerance"].example), example_values()
        vary = {"tolerance": lambda i: {"mass": f"{300 + i % 997} kg", "com_from_a": f"{300 + (7 * i) % 401} mm"},
                "run": lambda i: {"p1_reading": f"{60 + (i % 997) / 10:g} g@{(37 * i) % 360}"}}
        if not args.vary:
            vary = {"tolerance": lambda i: {}, "run": lambda i: {}}
        routes = [
            ("trivial route GET /ping", "GET", "/ping", None),
            ("tolerance page POST /tolerance", "POST", "/tolerance",
             lambda token, i: {"csrf": token, **tolerance, **vary["tolerance"](i)}),
            ("solve step POST /run (readings -> corrections)", "POST", "/run",
             lambda token, i: {"csrf": token, "step": "runs", "go": "next", **run, **vary["run"](i)}),
        ]
        for name, method, path, form in routes:
            _load(port, method, path, form, 1, 5, 10)  # warm-up
        runs: dict[str, list] = {name: [] for name, *_rest in routes}
        share = max(1, args.requests // args.rounds)
        for k in range(args.rounds):  # the routes take turns, so that a change in the machine's other load
            for name, method, path, form in routes:  # falls on all of them alike
                runs[name].append(_load(port, method, path, form, args.clients, share, args.seconds / args.rounds,
                                        first=k * args.clients * share))
        results = {name: _summary(r) for name, r in runs.items()}
        base = results[routes[0][0]]
        print(f"{args.clients} clients on 127.0.0.1, up to {share * args.rounds} requests each per route in "
              f"{args.rounds} rounds taking turns; "
              + ("every request a different rotor (--vary)" if args.vary else "the same invented example each time"))
        for name, r in results.items():
            print(f"{name}: {r['n']} requests, median {r['median_ms']:.2f} ms ({r['median_ms'] / base['median_ms']:.2f}x), "
                  f"p95 {r['p95_ms']:.2f} ms ({r['p95_ms'] / base['p95_ms']:.2f}x), "
                  f"{r['per_s']:.1f}/s ({base['per_s'] / r['per_s']:.2f}x slower)")
    finally:
        _stop(server)
        shutil.rmtree(folder, ignore_errors=True)


if __name__ == "__main__":
    sys.exit(main())
