"""The guided balancing run and the register pages of the browser face, through Starlette's test client:
a run of the invented demo rotor to a recorded job with its files, check run, sign-offs and release;
every state-changing route refuses a missing or wrong CSRF token, no session and a role that may not do
it; crafted paths and order numbers never leave the output folder.

Behaviour checks only: no published check value here, so none needs a source.
"""

from __future__ import annotations

import re

import pytest
from starlette.testclient import TestClient

from toolkit.register import records as R
from toolkit.register.store import open_register
from toolkit.web import accounts as A
from toolkit.web.app import create_app
from toolkit.web.run import example_values

PASSWORD = "invented-password-1"
ROLES = ("operator", "machinist", "planner", "inspector", "administrator")


@pytest.fixture
def shop(tmp_path):
    reg = open_register(tmp_path / "register.sqlite3")
    for role in ROLES:
        A.add(reg, role, role, PASSWORD)
    out = tmp_path / "orders"
    app = create_app(reg, loopback=False, out=out)
    yield reg, app, out
    reg.close()


def _token(page_text: str) -> str:
    return re.search(r'name="csrf" value="([^"]+)"', page_text).group(1)


def _client(app, name=None):
    client = TestClient(app, base_url="http://127.0.0.1:8470", follow_redirects=False)
    token = _token(client.get("/signin").text)
    if name:
        done = client.post("/signin", data={"csrf": token, "name": name, "password": PASSWORD})
        assert done.status_code == 303
        token = _token(client.get("/tolerance").text)
    return client, token


def _record(app, name="operator") -> str:
    client, token = _client(app, name)
    done = client.post("/run", data={"csrf": token, "step": "record", "go": "record", **example_values()})
    assert done.status_code == 303, done.text[:2000]
    return done.headers["location"].rsplit("/", 1)[1]


def _step(app, step: str, go: str, **changes):
    """A post of the guided run from ``step`` with the invented demo rotor's values changed by ``changes``."""
    client, token = _client(app, "operator")
    values = example_values() | changes
    return client.post("/run", data={"csrf": token, "step": step, "go": go, **values}), values


def test_the_guided_run_walks_forward_and_back_without_losing_anything(shop):
    _reg, app, _out = shop
    page, values = _step(app, "rotor", "next", serial="SN-invented-7", p1_reading="90 g@100")
    assert page.status_code == 200 and 'name="step" value="angles"' in page.text
    page, _v = _step(app, "runs", "back", **values)
    assert 'name="step" value="angles"' in page.text
    for name in ("serial", "p1_reading", "mass"):
        assert values[name] in page.text  # kept as hidden fields on another step
    page, _v = _step(app, "runs", "next", **values)
    assert 'name="step" value="corrections"' in page.text
    assert "REMOVE" in page.text.upper() and "predicted residual" in page.text.lower()


def test_a_problem_sends_the_person_back_to_its_step_with_the_message_beside_the_field(shop):
    _reg, app, _out = shop
    page, _values = _step(app, "runs", "next", mass="412", p2_reading="64.5 g")
    assert page.status_code == 422 and 'name="step" value="rotor"' in page.text
    assert re.search(r'id="err-mass"[^>]*>[^<]*no unit', page.text)
    assert 'value="412"' in page.text


def test_a_recorded_run_has_its_files_and_goes_to_release(shop):
    reg, app, out = shop
    number = _record(app, "operator")
    detail = R.job_detail(reg, number)
    assert detail["status"] == "planned" and detail["created_by"] == "operator"
    names = sorted(p.name for p in out.iterdir())
    assert names == sorted([f"{number}.pdf", f"{number}.xlsx"])
    client, token = _client(app, "operator")
    pdf = client.get(f"/jobs/{number}/files/{number}.pdf")
    assert pdf.status_code == 200 and pdf.content.startswith(b"%PDF-")
    assert client.post(f"/jobs/{number}/status", data={"csrf": token, "status": "balanced"}).status_code == 303
    planes = detail["workorder"]["planes"]
    residuals = {f"res{n}": f"{0.5 * p['u_per_g_mm']:.1f} g*mm@40" for n, p in enumerate(planes)}
    assert client.post(f"/jobs/{number}/check", data={"csrf": token, **residuals}).status_code == 303
    assert client.post(f"/jobs/{number}/status", data={"csrf": token, "status": "checked"}).status_code == 303
    assert client.post(f"/jobs/{number}/sign", data={"csrf": token}).status_code == 303
    inspector, itoken = _client(app, "inspector")
    # released needs the inspector's own sign-off first: refused in words, nothing changed
    early = inspector.post(f"/jobs/{number}/status", data={"csrf": itoken, "status": "released"})
    assert early.status_code == 422 and "inspector" in early.text
    assert inspector.post(f"/jobs/{number}/sign", data={"csrf": itoken}).status_code == 303
    assert inspector.post(f"/jobs/{number}/status", data={"csrf": itoken, "status": "released"}).status_code == 303
    detail = R.job_detail(reg, number)
    assert detail["status"] == "released"
    signed = {(s["role"], s["name"]) for s in detail["signoffs"]}
    assert signed == {("operator", "operator"), ("inspector", "inspector")}
    assert all(s["signed"].endswith("UTC") and s["source"] == "browser" for s in detail["signoffs"])
    assert [h["by"] for h in detail["status_history"]][-1] == "inspector"
    cert = inspector.get(f"/jobs/{number}/certificate.pdf")
    assert cert.status_code == 200 and cert.content.startswith(b"%PDF-")


def _routes(number):
    return [("/run", {"step": "record", "go": "record", **example_values()}, "record"),
            (f"/jobs/{number}/check", {"res0": "10 g*mm@10"}, "check"),
            (f"/jobs/{number}/sign", {}, "sign"),
            (f"/jobs/{number}/status", {"status": "balanced"}, "check"),
            (f"/jobs/{number}/status", {"status": "released"}, "release"),
            (f"/jobs/{number}/trim", {"go": "record", "after": "drive-end hub=60 g@300\nfan-end rim=3 g@20"}, "check")]


def test_every_state_changing_route_refuses_without_the_token_without_a_session_and_without_the_role(shop):
    reg, app, _out = shop
    number = _record(app)
    before = R.job_detail(reg, number)
    jobs_before = len(R.list_jobs(reg))
    for path, data, action in _routes(number):
        client, token = _client(app, "administrator" if action != "sign" else "planner")
        assert client.post(path, data=data).status_code == 403, path                       # no token
        assert client.post(path, data={**data, "csrf": token[::-1]}).status_code == 403, path  # wrong token
        anonymous, atoken = _client(app)
        assert anonymous.post(path, data={**data, "csrf": atoken}).status_code == 401, path  # no session
        for role in ROLES:
            if A.may(role, action):
                continue
            person, ptoken = _client(app, role)
            refused = person.post(path, data={**data, "csrf": ptoken})
            assert refused.status_code == 403, (path, role)
            assert "may not" in refused.text
    after = R.job_detail(reg, number)
    assert after["status_history"] == before["status_history"] and after["signoffs"] == before["signoffs"]
    assert after["check_runs"] == before["check_runs"] and len(R.list_jobs(reg)) == jobs_before
    assert after["trims"] == before["trims"] == []


@pytest.mark.parametrize("crafted", ["..%2F..%2Fregister.sqlite3", "%2E%2E%2Fregister.sqlite3", "register.sqlite3",
                                     "..", "%2Fetc%2Fpasswd", "WO-x.pdf%00.pdf"])
def test_a_crafted_file_name_never_leaves_the_output_folder(shop, crafted):
    _reg, app, _out = shop
    number = _record(app)
    client, _token_ = _client(app, "operator")
    got = client.get(f"/jobs/{number}/files/{crafted}")
    _no_file(got)


def _no_file(got):
    """Nothing but a refusal or one of the site's own pages (a URL with '..' is normalised to another page)."""
    assert got.status_code in (200, 404, 409), got.status_code
    assert got.headers["content-type"].startswith("text/html") and "content-disposition" not in got.headers
    assert b"SQLite format" not in got.content and b"root:" not in got.content


@pytest.mark.parametrize("crafted", ["..%2F..%2Fetc", "%2E%2E", "..", "WO-2026-00001%2F..%2F.."])
def test_a_crafted_order_number_never_leaves_the_output_folder(shop, crafted):
    _reg, app, _out = shop
    _record(app)
    client, _token_ = _client(app, "operator")
    for tail in ("", "/files/passwd", "/files/register.sqlite3", "/certificate.pdf"):
        _no_file(client.get(f"/jobs/{crafted}{tail}"))


def test_a_file_outside_the_output_folder_is_not_served_even_when_listed(shop, tmp_path):
    reg, app, _out = shop
    number = _record(app)
    secret = tmp_path / "elsewhere.pdf"
    secret.write_bytes(b"%PDF- not an order")
    R.add_files(reg, number, [secret])
    client, _token_ = _client(app, "operator")
    assert client.get(f"/jobs/{number}/files/elsewhere.pdf").status_code == 404


def test_register_pages_list_jobs_and_types(shop):
    reg, app, _out = shop
    number = _record(app)
    client, _token_ = _client(app, "planner")
    page = client.get("/jobs")
    assert page.status_code == 200 and number in page.text
    assert number not in client.get("/jobs?status=released").text
    assert client.get("/types").status_code == 200
    page = client.get(f"/jobs/{number}")
    assert "Angles in degrees from keyway, against rotation" in page.text
