"""The browser face through Starlette's test client: sign-in, sessions, CSRF, roles, rate limits, the
tolerance page and the calculators (the same numbers as the command line).

Behaviour checks, except where a line names its source.
"""

from __future__ import annotations

import json
import re

import pytest

from starlette.testclient import TestClient  # noqa: E402

from toolkit.cli import main  # noqa: E402
from toolkit.register.store import open_register  # noqa: E402
from toolkit.web import accounts as A  # noqa: E402
from toolkit.web.app import FAILED_LIMIT, create_app  # noqa: E402
from toolkit.web.forms import PAGES  # noqa: E402

PASSWORD = "invented-password-1"


@pytest.fixture
def reg(tmp_path):
    r = open_register(tmp_path / "register.sqlite3")
    yield r
    r.close()


def _client(reg, *, loopback=True, **kw):
    return TestClient(create_app(reg, loopback=loopback, **kw), base_url="http://127.0.0.1:8470",
                      follow_redirects=False)


def _csrf(client, path="/signin") -> str:
    page = client.get(path)
    found = re.search(r'name="csrf" value="([^"]+)"', page.text)
    assert found, page.text[:500]
    return found.group(1)


def _signed_in(reg, role="operator", name=None, **kw):
    name = name or role + "1"
    if A.find(reg, name) is None:
        A.add(reg, name, role, PASSWORD)
    client = _client(reg, **kw)
    token = _csrf(client)
    done = client.post("/signin", data={"csrf": token, "name": name, "password": PASSWORD, "next": "/tolerance"})
    assert done.status_code == 303 and done.headers["location"] == "/tolerance"
    return client


def _cli_json(capsys, argv):
    argv = list(argv)
    at = argv.index("--") if "--" in argv else len(argv)
    status = main(argv[:at] + ["--json"] + argv[at:])
    out, _err = capsys.readouterr()
    return status, json.loads(out)


def _page_json(text: str) -> dict:
    found = re.search(r'<pre id="result-json">(.*?)</pre>', text, re.S)
    assert found, text[:2000]
    import html

    return json.loads(html.unescape(found.group(1)))


# -- passwords and accounts -------------------------------------------------------------------------------

def test_passwords_are_stored_as_scrypt_and_checked():
    stored = A.hash_password(PASSWORD)
    kind, n, r, p, salt, digest = stored.split("$")
    assert (kind, n, r, p) == ("scrypt", "16384", "8", "1")  # RFC 7914, section 2: N=2^14, r=8, p=1
    assert PASSWORD not in stored and len(bytes.fromhex(salt)) == 16
    assert A.check_password(PASSWORD, stored) and not A.check_password(PASSWORD + "x", stored)
    assert A.hash_password(PASSWORD) != stored  # a fresh salt each time
    assert not A.check_password(PASSWORD, "not$a$hash")


def test_rfc7914_scrypt_test_vector():
    import hashlib

    # RFC 7914, section 12, second vector: P="password", S="NaCl", N=1024, r=8, p=16, dkLen=64
    got = hashlib.scrypt(b"password", salt=b"NaCl", n=1024, r=8, p=16, dklen=64)
    assert got.hex().startswith("fdbabe1c9d3472007856e7190d01e9fe7c6ad7cbc8237830e77376634b373162")


def test_accounts_from_the_command_line(tmp_path, capsys, monkeypatch):
    where = str(tmp_path / "r.sqlite3")
    import io

    monkeypatch.setattr("sys.stdin", io.StringIO(PASSWORD + "\n"))
    assert main(["accounts", "add", "anna", "--role", "inspector", "--password-stdin", "--register", where]) == 0
    capsys.readouterr()
    assert main(["accounts", "list", "--register", where, "--json"]) == 0
    rows = json.loads(capsys.readouterr().out)["accounts"]
    assert [(r["name"], r["role"]) for r in rows] == [("anna", "inspector")] and "password" not in rows[0]
    monkeypatch.setattr("sys.stdin", io.StringIO(PASSWORD + "\n"))
    assert main(["accounts", "add", "anna", "--role", "operator", "--password-stdin", "--register", where]) == 2
    assert "exists already" in capsys.readouterr().err
    assert main(["accounts", "add", "bob", "--role", "boss", "--register", where]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "operator, machinist, planner, inspector, administrator" in err
    monkeypatch.setattr("sys.stdin", io.StringIO("short\n"))
    assert main(["accounts", "password", "anna", "--password-stdin", "--register", where]) == 2
    assert "at least" in capsys.readouterr().err
    assert main(["accounts", "remove", "anna", "--register", where]) == 0
    assert main(["accounts", "remove", "anna", "--register", where]) == 2


def test_serve_refuses_a_shop_network_address_without_accounts(tmp_path, capsys):
    where = str(tmp_path / "r.sqlite3")
    assert main(["serve", "--host", "0.0.0.0", "--register", where]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "needs accounts" in err
    assert main(["serve", "--tls-proxy", "--register", where]) == 2
    assert "needs accounts" in capsys.readouterr().err
    assert main(["serve", "--host", "not-an-address", "--register", where]) == 2
    assert main(["serve", "--port", "0", "--register", where]) == 2
    assert capsys.readouterr().err.count("\n") == 2


def test_accounts_table_is_a_migration_and_not_exported(reg, tmp_path):
    from toolkit.register.schema import LATEST, MIGRATIONS, TABLES

    assert LATEST >= 3 and any("accounts" in note for _v, note, _f in MIGRATIONS)
    assert "accounts" not in [t.name for t in TABLES]
    A.add(reg, "anna", "inspector", PASSWORD)
    import io

    from toolkit.register.portable import export_lines

    out = io.BytesIO()
    export_lines(reg, out)
    assert b"scrypt$" not in out.getvalue() and b"anna" not in out.getvalue()


# -- sessions, CSRF, roles ---------------------------------------------------------------------------------

def test_session_cookie_is_signed_httponly_samesite(reg):
    client = _signed_in(reg)
    cookie = client.cookies.get("counterpoise_session")
    assert cookie
    # the set-cookie header of the sign-in
    c2 = _client(reg)
    token = _csrf(c2)
    done = c2.post("/signin", data={"csrf": token, "name": "operator1", "password": PASSWORD})
    header = done.headers["set-cookie"].lower()
    assert "httponly" in header and "samesite=strict" in header and "secure" not in header
    tls = _client(reg, tls_proxy=True)
    assert "secure" in tls.get("/signin").headers["set-cookie"].lower()
    # a tampered cookie is no session
    forged = _client(reg)
    forged.cookies.set("counterpoise_session", cookie[:-3] + ("abc" if not cookie.endswith("abc") else "xyz"))
    assert forged.get("/tolerance").status_code == 303


STATE_CHANGING = ["/signin", "/signout", "/units"] + [f"/{slug}" for slug in PAGES]


@pytest.mark.parametrize("path", STATE_CHANGING)
def test_every_form_refuses_a_missing_or_wrong_csrf_token(reg, path):
    client = _signed_in(reg)
    assert client.post(path, data={"name": "operator1", "password": PASSWORD}).status_code == 403
    assert client.post(path, data={"csrf": "wrong", "name": "operator1", "password": PASSWORD}).status_code == 403
    # a token from another session does not pass either
    other = _client(reg)
    foreign = _csrf(other)
    assert client.post(path, data={"csrf": foreign}).status_code == 403


def test_a_form_from_another_site_is_refused(reg):
    client = _signed_in(reg)
    token = _csrf(client, "/tolerance")
    sent = client.post("/tolerance", data={"csrf": token, **PAGES["tolerance"].example},
                       headers={"origin": "http://elsewhere.invalid"})
    assert sent.status_code == 403


@pytest.mark.parametrize("path", [f"/{slug}" for slug in PAGES] + ["/units"])
def test_without_a_session_nothing_is_done_once_accounts_exist(reg, path):
    A.add(reg, "anna", "inspector", PASSWORD)
    client = _client(reg)
    token = _csrf(client)  # a session with a token, but nobody signed in
    assert client.post(path, data={"csrf": token, "units": "metric"}).status_code == 401
    if path != "/units":
        assert client.get(path).status_code == 303  # a page asks to sign in first


def test_open_mode_only_on_loopback_without_accounts(reg):
    client = _client(reg)
    assert client.get("/tolerance").status_code == 200
    shop = _client(reg, loopback=False)
    assert shop.get("/tolerance").status_code == 303


def test_sign_in_is_rate_limited_per_address_and_name(reg):
    A.add(reg, "anna", "inspector", PASSWORD)
    client = _client(reg)
    token = _csrf(client)
    for _ in range(FAILED_LIMIT):
        assert client.post("/signin", data={"csrf": token, "name": "anna", "password": "wrong-password!"}
                           ).status_code == 401
    refused = client.post("/signin", data={"csrf": token, "name": "anna", "password": PASSWORD})
    assert refused.status_code == 429 and "try again in" in refused.text
    # the right password does not get through while the limit holds, and an unknown name counts too
    assert "counterpoise_session" not in refused.headers.get("set-cookie", "") or refused.status_code == 429


def test_removed_account_or_new_password_ends_the_session(reg):
    client = _signed_in(reg, "machinist")
    assert client.get("/tolerance").status_code == 200
    A.set_password(reg, "machinist1", PASSWORD + "-new")
    assert client.get("/tolerance").status_code == 303
    client = _signed_in(reg, "planner")
    A.remove(reg, "planner1")
    assert client.get("/tolerance").status_code == 303


def test_sign_in_never_sends_a_person_to_another_site(reg):
    A.add(reg, "anna", "inspector", PASSWORD)
    for target in ("https://elsewhere.invalid/", "//elsewhere.invalid/x", "/\\elsewhere.invalid"):
        client = _client(reg)
        token = _csrf(client)
        done = client.post("/signin", data={"csrf": token, "name": "anna", "password": PASSWORD, "next": target})
        assert done.status_code == 303 and done.headers["location"] == "/"


def test_an_oversized_upload_is_refused(reg):
    from toolkit.web.app import MAX_UPLOAD

    client = _signed_in(reg)
    token = _csrf(client, "/tolerance")
    sent = client.post("/tolerance", data={"csrf": token, "grade": "x" * (MAX_UPLOAD + 10)})
    assert sent.status_code == 413


def test_pages_send_protective_headers(reg):
    page = _client(reg).get("/tolerance")
    assert page.headers["x-frame-options"] == "DENY" and "frame-ancestors 'none'" in page.headers[
        "content-security-policy"]


# -- the tolerance page and the calculators ---------------------------------------------------------------

def test_tolerance_page_shows_the_command_lines_numbers(reg, capsys):
    client = _signed_in(reg)
    token = _csrf(client, "/tolerance")
    values = {"grade": "G6.3", "mass": "100 kg", "speed": "3000 rpm"}
    page = client.post("/tolerance", data={"csrf": token, **values})
    assert page.status_code == 200
    shown = _page_json(page.text)
    _status, cli = _cli_json(capsys, ["tolerance", "--grade", "G6.3", "--mass", "100 kg", "--speed", "3000 rpm"])
    assert shown == cli
    # ISO 21940-11:2016, 6.3.3: U_per = 1000 * 6.3 mm/s * 100 kg / (3000 rpm * 2 pi / 60) = 2005 g*mm (4 digits)
    assert shown["u_per_g_mm"] == pytest.approx(2005, rel=5e-4)
    assert "2005 g·mm" in page.text


def test_tolerance_page_with_planes_equals_the_command_line(reg, capsys):
    client = _signed_in(reg)
    token = _csrf(client, "/tolerance")
    example = PAGES["tolerance"].example
    page = client.post("/tolerance", data={"csrf": token, **example, "units": "imperial"})
    shown = _page_json(page.text)
    _status, cli = _cli_json(capsys, ["tolerance", "--grade", "G6.3", "--mass", "412 kg", "--speed", "1480 rpm",
                                      "--bearing-span", "900 mm", "--com-from-a", "400 mm", "--plane", "I=-120 mm",
                                      "--plane", "II=1010 mm", "--units", "imperial"])
    assert shown == cli and [p["name"] for p in shown["planes"]] == ["I", "II"]
    assert "counterpoise tolerance" in page.text and "oz·in" in page.text


def test_an_error_is_shown_beside_its_field_and_the_input_is_kept(reg):
    client = _signed_in(reg)
    token = _csrf(client, "/tolerance")
    page = client.post("/tolerance", data={"csrf": token, "grade": "G6.3", "mass": "412", "speed": "1480 rpm",
                                           "plane": "I=-120 mm"})
    assert page.status_code == 422
    error = re.search(r'<p class="error" id="err-mass" role="alert">(.*?)</p>', page.text, re.S)
    assert error and "no unit" in error.group(1) and "--mass" not in error.group(1)
    assert 'value="412"' in page.text and "I=-120 mm" in page.text and 'value="G6.3"' in page.text
    # a required field left empty
    page = client.post("/tolerance", data={"csrf": token, "mass": "412 kg", "speed": "1480 rpm"})
    assert re.search(r'id="err-grade"', page.text)


@pytest.mark.parametrize("slug", ["drill", "plate", "washers", "split", "verify"])
def test_each_calculator_equals_its_command(reg, capsys, slug):
    client = _signed_in(reg)
    token = _csrf(client, f"/{slug}")
    page = client.post(f"/{slug}", data={"csrf": token, **PAGES[slug].example})
    assert page.status_code == 200, page.text[:3000]
    shown = _page_json(page.text)
    argv = re.search(r'<pre class="cmd">counterpoise (.*?)</pre>', page.text, re.S).group(1)
    import html
    import shlex

    _status, cli = _cli_json(capsys, shlex.split(html.unescape(argv)))
    assert shown == cli


def test_a_file_option_is_never_offered(reg):
    from toolkit.web.forms import fields_of

    for page in PAGES.values():
        names = {f.name for f in fields_of(page)}
        assert not names & {"materials", "stock", "washers", "coefficients", "save_coefficients", "force", "out",
                            "runs"}, page.slug
        drills = [f for f in fields_of(page) if f.name == "drills"]
        assert all(set(f.choices) <= {"", "metric", "inch"} for f in drills)
    client = _signed_in(reg)
    token = _csrf(client, "/drill")
    page = client.post("/drill", data={"csrf": token, **PAGES["drill"].example, "drills": "/etc/passwd"})
    assert page.status_code == 422 and "root:" not in page.text


def test_drill_page_says_remove_in_words_with_cautions(reg):
    client = _signed_in(reg)
    token = _csrf(client, "/drill")
    page = client.post("/drill", data={"csrf": token, **PAGES["drill"].example})
    assert '<strong class="remove">remove</strong>' in page.text
    assert "Caution:" in page.text and "lock-out" in page.text.lower()


def test_pages_computed_at_once_in_many_threads_equal_those_computed_one_by_one():
    """No lock serialises the subcommands: each thread's result, text and error stay its own."""
    from concurrent.futures import ThreadPoolExecutor

    from toolkit.web.forms import run_page

    jobs = []
    for slug, page in PAGES.items():
        jobs.append((page, dict(page.example)))
        jobs.append((page, dict(page.example) | {next(iter(page.example)): "not a value"}))  # an error
    for mass in ("100 kg", "250 kg", "412 kg", "900 kg"):
        jobs.append((PAGES["tolerance"], dict(PAGES["tolerance"].example) | {"mass": mass}))
    alone = [run_page(page, values, "metric") for page, values in jobs]
    with ThreadPoolExecutor(max_workers=8) as pool:
        together = list(pool.map(lambda job: run_page(job[0], job[1], "metric"), jobs * 3))
    for i, outcome in enumerate(together):
        expected = alone[i % len(jobs)]
        assert (outcome.status, outcome.data, outcome.text, outcome.errors) == \
            (expected.status, expected.data, expected.text, expected.errors)
    assert any(o.errors for o in alone) and any(o.data for o in alone)


def test_one_run_gives_the_command_lines_json_and_text(capsys):
    from toolkit.web.forms import argv_of, run_page

    page = PAGES["drill"]
    outcome = run_page(page, dict(page.example), "metric")
    argv = argv_of(page, dict(page.example), "metric")
    assert main(argv) == outcome.status
    text, _err = capsys.readouterr()
    assert outcome.text == text
    _status, data = _cli_json(capsys, argv)
    assert outcome.data == data


# -- a page is the command line's result, computed without printing -------------------------------------

_AGAINST_THE_CLI = [  # (page, values over its example): results, out-of-tolerance results and refusals
    ("tolerance", {}),
    ("tolerance", {"residual": "I=20000 g*mm@40\nII=100 g*mm@200"}),  # plane I fails: exit status 1
    ("tolerance", {"mass": "412"}),                                   # no unit: the library refuses
    ("tolerance", {"grade": ""}),                                     # a required option left out: argparse
    ("tolerance", {"plane": "I=-120 mm", "rotor_length": "300 mm", "correction_diameter": "600 mm"}),
    ("drill", {"radius": "-5 mm"}),
    ("plate", {"shape": "face"}),
    ("washers", {"size": "M99"}),
    ("split", {"at": ""}),                                            # neither --positions nor --at
    ("verify", {"reading": "44.88@0\n53.63@60"}),                     # too few positions
    ("verify", {"allowed": "10 g*mm"}),                               # the residual fails: exit status 1
]


@pytest.mark.parametrize("units", ["metric", "imperial"])
@pytest.mark.parametrize("slug,change", _AGAINST_THE_CLI)
def test_a_page_shows_the_command_lines_text_json_and_error(capsys, slug, change, units):
    """The same status, text, JSON object and error message as ``counterpoise`` with the page's arguments."""
    from toolkit.web.forms import _place, argv_of, fields_of, run_page

    page = PAGES[slug]
    values = dict(page.example) | change
    outcome = run_page(page, values, units)
    argv = argv_of(page, values, units)
    status = main(argv)
    text, err = capsys.readouterr()
    assert outcome.status == status
    if status in (0, 1):
        assert outcome.text == text and err == ""
        _status, data = _cli_json(capsys, argv)
        assert outcome.data == data
    else:
        assert status == 2 and outcome.data is None and text == ""
        message = re.sub(r"^counterpoise [a-z]+: error: (argument )?", "", err.strip().splitlines()[0])
        assert outcome.errors == _place(message, fields_of(page), status)


def test_a_page_changes_no_stream_function_or_warnings_filter():
    """Nothing process-wide is replaced while a page computes (other requests and the server's own output
    never meet a page's)."""
    import sys
    import warnings

    from toolkit.commands import fabrication, tolerances
    from toolkit.web.forms import run_page

    before = (sys.stdout, sys.stderr, tolerances.emit, fabrication.emit, list(warnings.filters))
    for page in PAGES.values():
        assert run_page(page, dict(page.example), "metric").data is not None
        run_page(page, dict(page.example) | {next(iter(page.example)): "not a value"}, "metric")
    assert (sys.stdout, sys.stderr, tolerances.emit, fabrication.emit, list(warnings.filters)) == before


def test_a_planner_upload_gives_its_orders_as_one_zip(reg, tmp_path):
    """An uploaded sheet runs to the end; the zip holds each order's PDF (stored as it is: a PDF is compressed
    already), the combined PDF and the summary."""
    import csv
    import io
    import time
    import zipfile
    from pathlib import Path

    examples = Path(__file__).resolve().parents[1] / "examples" / "planner.csv"
    with examples.open(encoding="utf-8", newline="") as handle:
        header, *rows = list(csv.reader(handle))
    rows = [row for row in rows if not row[header.index("job")].strip()][:3]
    sheet = io.StringIO()
    csv.writer(sheet).writerows([header, *rows])
    client = _signed_in(reg, "planner")
    token = _csrf(client, "/planner")
    sent = client.post("/planner", data={"csrf": token, "paper": ""},
                       files={"sheet": ("planner.csv", sheet.getvalue().encode("utf-8"), "text/csv")})
    assert sent.status_code == 303, sent.text[:2000]
    where = sent.headers["location"]
    for _ in range(600):
        state = client.get(where + "/state").json()
        if state["finished"]:
            break
        time.sleep(0.1)
    assert state["finished"] and state["error"] is None and state["failed"] == 0
    archive = zipfile.ZipFile(io.BytesIO(client.get(where + "/orders.zip").content))
    assert archive.testzip() is None
    infos = {i.filename: i for i in archive.infolist()}
    for row in rows:
        order = row[header.index("order")]
        assert infos[f"{order}.pdf"].compress_type == zipfile.ZIP_STORED
        assert archive.read(f"{order}.pdf").startswith(b"%PDF-")
    assert any(name.endswith("-summary.xlsx") for name in infos)
    assert all(i.compress_type == zipfile.ZIP_DEFLATED for name, i in infos.items()
               if not name.endswith((".pdf", ".xlsx")))
