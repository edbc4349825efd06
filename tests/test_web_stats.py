"""The series-statistics page of the browser face (/stats): the numbers are the command line's
``counterpoise register stats``, the plots are in the page as SVG, the downloads are the command line's PDF
and workbook, the selection is kept and a bad date is refused beside its field; /types and /jobs link it.

Behaviour checks only: every expected number comes from the command line over the same register, so none
needs a source.
"""

from __future__ import annotations

import json
import re
import xml.etree.ElementTree as ET

from toolkit.cli import main
from toolkit.register import records as R
from tests.register_support import TEMPLATE
from tests.test_web_register import _client, shop  # noqa: F401  (the fixture)
from toolkit.web.run import example_values


def _jobs(reg, app) -> list[str]:
    R.save_type(reg, "F-400", TEMPLATE)
    client, token = _client(app, "operator")
    numbers = []
    for a, b in (("40 g@10", "30 g@200"), ("55 g@100", "20 g@300"), ("25 g@250", "45 g@20")):
        values = example_values() | {"type": "F-400", "p1_reading": a, "p2_reading": b}
        done = client.post("/run", data={"csrf": token, "step": "record", "go": "record", **values})
        assert done.status_code == 303, done.text[:3000]
        numbers.append(done.headers["location"].rsplit("/", 1)[1])
    for n, ok in zip(numbers[:2], (True, False)):  # one passes its check run, one goes to rework
        R.set_status(reg, n, "balanced")
        planes = R.job_detail(reg, n)["workorder"]["planes"]
        R.record_check(reg, n, residuals={p["name"]: f"{(0.5 if ok else 3) * p['limit_g_mm']} g*mm@0" for p in planes})
        R.set_status(reg, n, "checked" if ok else "rework")
    return numbers


def test_the_statistics_page_shows_the_command_lines_numbers_and_plots(shop, capsys):
    reg, app, _out = shop
    _jobs(reg, app)
    assert main(["register", "stats", "--register", str(reg.url.database), "--type", "F-400", "--json"]) == 0
    cli = json.loads(capsys.readouterr().out)
    client, _token = _client(app, "planner")
    page = client.get("/stats", params={"type": "F-400"})
    assert page.status_code == 200
    table = re.search(r'<table class="numbers" id="series">(.*?)</table>', page.text, re.S).group(1)
    assert f"<td>{cli['jobs']}</td>" in table and cli["jobs"] == 3
    assert f"{100 * cli['first_pass_yield']:.1f} %" in table and f"{100 * cli['rework_rate']:.1f} %" in table
    assert f"{cli['operations_per_rotor']:.2f} operations" in table
    svgs = [ET.fromstring(s) for s in re.findall(r"<svg\b.*?</svg>", page.text, re.S)]
    assert len(svgs) == 2 * len(cli["planes"]) + 1  # scatter and histogram per plane, one trend
    for plane in cli["planes"]:
        scatter = next(s for s in svgs if f"Plane {plane['plane']}: as found, polar" in "".join(s.itertext()))
        dots = [c for c in scatter.iter("{http://www.w3.org/2000/svg}circle") if "cp-reading" in c.get("class")]
        assert len(dots) == len(plane["scatter"]) == 3
    assert "each job's reference mark, in the sense each job declared" in page.text
    assert 'value="F-400" selected' in page.text
    for kind, magic in (("pdf", b"%PDF-"), ("xlsx", b"PK")):
        got = client.get(f"/stats/register-statistics.{kind}", params={"type": "F-400"})
        assert got.status_code == 200 and got.content.startswith(magic)
        assert "attachment" in got.headers["content-disposition"]
    assert client.get("/stats/register-statistics.csv").status_code == 404


def test_a_bad_selection_is_refused_beside_its_field_and_kept(shop):
    reg, app, _out = shop
    client, _token = _client(app, "operator")
    bad = client.get("/stats", params={"since": "2026-13-40", "until": "2026-12-31"})
    assert bad.status_code == 422
    assert re.search(r'id="err-since"[^>]*>since: &#39;2026-13-40&#39; is not a date', bad.text)
    assert 'value="2026-13-40"' in bad.text and 'value="2026-12-31"' in bad.text
    unknown = client.get("/stats", params={"type": "no such type"})
    assert unknown.status_code == 422 and 'id="err-type"' in unknown.text
    assert client.get("/stats/register-statistics.pdf", params={"since": "x"}).status_code == 422
    assert client.get("/stats").status_code == 200 and "No jobs in this selection" in client.get("/stats").text


def test_types_and_jobs_link_the_statistics(shop):
    reg, app, _out = shop
    R.save_type(reg, "F-400", TEMPLATE)
    client, _token = _client(app, "operator")
    assert 'href="/stats?type=F-400"' in client.get("/types").text
    assert 'href="/stats?status=rework"' in client.get("/jobs?status=rework").text
    anonymous, _t = _client(app)
    assert anonymous.get("/stats").status_code == 303  # sign in first
