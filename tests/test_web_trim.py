"""The trim run of the guided balancing run: a recorded job corrected once more, recorded against the same
job as a new row each time; the page's numbers equal the command line's ``solve --coefficients ...
--installed ... --after`` and the work-order chain's.

Behaviour checks only: the readings are invented and every expected value comes from the toolkit's own
command line or library, so none needs a source.
"""

from __future__ import annotations

import json
import re
from html import unescape

import pytest

from toolkit.cli import main
from toolkit.errors import BadInput
from toolkit.register import records as R
from tests.test_web_register import _client, shop  # noqa: F401  (the fixture)
from toolkit.web.run import example_values

RUNS = {"kind": "runs", "sensors": "near\nfar", "original": "4.2 mm/s@285\n3.1 mm/s@40",
        "trial1": "drive-end hub=25 g@0", "readings1": "6.1 mm/s@250\n3.5 mm/s@60",
        "trial2": "fan-end rim=25 g@90", "readings2": "5.0 mm/s@270\n5.5 mm/s@100"}


def _record(app, **changes) -> str:
    client, token = _client(app, "operator")
    done = client.post("/run", data={"csrf": token, "step": "record", "go": "record", **(example_values() | changes)})
    assert done.status_code == 303, done.text[:2000]
    return done.headers["location"].rsplit("/", 1)[1]


def _fields(text: str) -> dict:
    return {k: unescape(v) for k, v in re.findall(r'<textarea[^>]*name="(before|installed|after)"[^>]*>([^<]*)', text)}


def test_a_machine_job_is_trimmed_twice_and_each_trim_is_a_new_row(shop):
    reg, app, _out = shop
    number = _record(app)
    client, token = _client(app, "operator")
    page = client.get(f"/jobs/{number}")
    assert f"/jobs/{number}/trim" in page.text and "No trim run yet" in page.text
    start = client.get(f"/jobs/{number}/trim")
    assert start.status_code == 200 and "balancing machine" in start.text
    after = "drive-end hub=60 g@300\nfan-end rim=3 g@20"
    shown = client.post(f"/jobs/{number}/trim", data={"csrf": token, "go": "compute", **_fields(start.text),
                                                      "after": after})
    assert shown.status_code == 200 and _fields(shown.text)["after"] == after  # nothing typed is lost
    assert R.job_detail(reg, number)["trims"] == []                             # computing records nothing
    done = client.post(f"/jobs/{number}/trim", data={"csrf": token, "go": "record", "after": after})
    assert done.status_code == 303 and done.headers["location"].endswith("done=trim")
    trims = R.job_detail(reg, number)["trims"]
    assert [t["step"] for t in trims] == [1] and trims[0]["by"] == "operator" and trims[0]["source"] == "browser"
    hub = trims[0]["data"]["planes"][0]
    # the same chain as a job with these readings: 60 g at the hub's 160 mm radius, heavy spot at 300°
    assert hub["after_g_mm"] == pytest.approx(60 * 160) and not hub["after_within"]
    assert hub["action"] == "remove" and hub["correction_deg"] == pytest.approx(300)
    assert hub["passed"] and hub["predicted_g_mm"] < hub["limit_g_mm"]
    # the next trim starts from this one's readings; the first stays as it was
    second = client.get(f"/jobs/{number}/trim")
    assert "Trim run 2" in second.text and _fields(second.text)["before"] == after
    assert client.post(f"/jobs/{number}/trim", data={"csrf": token, "go": "record",
                                                     "after": "drive-end hub=2 g@10\nfan-end rim=1 g@20"}).status_code == 303
    again = R.job_detail(reg, number)["trims"]
    assert [t["step"] for t in again] == [1, 2] and again[0] == trims[0]
    assert "Trim 2" in client.get(f"/jobs/{number}").text


def test_the_command_line_shows_the_trims_of_a_job(shop, capsys):
    reg, app, _out = shop
    number = _record(app)
    client, token = _client(app, "operator")
    client.post(f"/jobs/{number}/trim", data={"csrf": token, "go": "record",
                                              "after": "drive-end hub=60 g@300\nfan-end rim=3 g@20"})
    assert main(["register", "show", number, "--register", str(reg.url.database)]) == 0
    out = capsys.readouterr().out
    assert "trim 1 (machine readings) at " in out and "by operator: after drive-end hub=60 g@300; fan-end rim=3 g@20" in out


def test_a_trial_run_job_trim_equals_the_command_line(shop, tmp_path, capsys):
    reg, app, _out = shop
    number = _record(app, **RUNS)
    client, token = _client(app, "operator")
    start = _fields(client.get(f"/jobs/{number}/trim").text)
    assert start["before"] == "4.2 mm/s@285\n3.1 mm/s@40" and start["installed"].startswith("fan-end rim=")
    after = "0.9 mm/s@100\n0.7 mm/s@200"
    page = client.post(f"/jobs/{number}/trim", data={"csrf": token, "go": "record", **start, "after": after})
    assert page.status_code == 303
    trim = R.job_detail(reg, number)["trims"][0]["data"]
    # the command line from the job's own runs: save its coefficients, then the trim with the same readings
    job = tmp_path / "job.toml"
    job.write_text(R.job_detail(reg, number)["job_text"], encoding="utf-8")
    runs = tmp_path / "runs.toml"
    from toolkit.register.records import toml_text
    from toolkit.workorder.job import parse_job

    m = parse_job(job.read_text(), "job").measurement
    runs.write_text(toml_text(dict(m.runs)), encoding="utf-8")  # the job's runs as a runs file
    coefficients = tmp_path / "c.json"
    assert main(["solve", str(runs), "--save-coefficients", str(coefficients), "--json"]) == 0
    capsys.readouterr()
    argv = ["solve", "--coefficients", str(coefficients), "--json"]
    for line in start["before"].splitlines():
        argv += ["--original", line]
    for line in start["installed"].splitlines():
        argv += ["--installed", line]
    for line in after.splitlines():
        argv += ["--after", line]
    assert main(argv) == 0
    cli = json.loads(capsys.readouterr().out)["trim"]["corrections"]
    assert [c["plane"] for c in cli] == [c["plane"] for c in trim["corrections"]]
    for mine, theirs in zip(trim["corrections"], cli):
        assert mine["action"] == theirs["action"]
        assert mine["mass_g"] == pytest.approx(theirs["mass_g"], rel=1e-6)
        assert mine["angle_deg"] == pytest.approx(theirs["angle_deg"], abs=1e-4)
    # the second trim starts from the first's coefficients, readings and correction
    second = _fields(client.get(f"/jobs/{number}/trim").text)
    assert second["before"] == after and second["installed"] == "\n".join(trim["trim_installed"])


def test_a_bad_reading_stays_beside_its_field_with_what_was_typed(shop):
    reg, app, _out = shop
    number = _record(app, **RUNS)
    client, token = _client(app, "operator")
    start = _fields(client.get(f"/jobs/{number}/trim").text)
    bad = client.post(f"/jobs/{number}/trim", data={"csrf": token, "go": "record", **start,
                                                    "after": "0.9 mm/s@100\n0.7@200"})
    assert bad.status_code == 422 and re.search(r'id="err-after"[^>]*>line 2: [^<]*no unit', bad.text)
    assert _fields(bad.text) == {**start, "after": "0.9 mm/s@100\n0.7@200"}
    wrong = client.post(f"/jobs/{number}/trim", data={"csrf": token, "go": "compute", **start,
                                                      "installed": "no such plane=3 g@10", "after": "1 mm/s@1\n1 mm/s@2"})
    assert wrong.status_code == 422 and re.search(r'id="err-installed"[^>]*>[^<]*unknown plane', wrong.text)
    assert R.job_detail(reg, number)["trims"] == []


def test_a_released_job_takes_no_trim(shop):
    reg, app, _out = shop
    number = _record(app)
    R.set_status(reg, number, "balanced")
    planes = R.job_detail(reg, number)["workorder"]["planes"]
    R.record_check(reg, number, residuals={p["name"]: "1 g*mm@0" for p in planes})
    R.set_status(reg, number, "checked")
    R.record_signoff(reg, number, "inspector", "inspector")
    R.set_status(reg, number, "released")
    with pytest.raises(BadInput, match="released is final"):
        R.record_trim(reg, number, "machine", {})
    client, token = _client(app, "operator")
    refused = client.post(f"/jobs/{number}/trim", data={"csrf": token, "go": "record",
                                                        "after": "drive-end hub=60 g@300\nfan-end rim=3 g@20"})
    assert refused.status_code == 422 and "released is final" in refused.text
    assert R.job_detail(reg, number)["trims"] == []


def test_a_failed_check_run_points_to_the_trim_until_a_trim_is_recorded(shop):
    reg, app, _out = shop
    number = _record(app)
    client, token = _client(app, "operator")
    R.set_status(reg, number, "balanced")
    planes = R.job_detail(reg, number)["workorder"]["planes"]
    R.record_check(reg, number, residuals={planes[0]["name"]: f"{2 * planes[0]['limit_g_mm']} g*mm@300"})
    assert "is not within the limit: a trim run corrects the same job again" in client.get(f"/jobs/{number}").text
    assert client.post(f"/jobs/{number}/trim", data={"csrf": token, "go": "record",
                                                     "after": "drive-end hub=60 g@300\nfan-end rim=3 g@20"}
                       ).status_code == 303
    page = client.get(f"/jobs/{number}").text
    assert "is not within the limit" not in page and "Start trim run 2" in page


def test_a_job_of_stored_coefficients_trims_from_that_file_and_says_so_when_it_is_gone(shop, tmp_path):
    from tests.test_build import job_text
    from toolkit.coefficients import coefficients_from, save_coefficients
    from toolkit.influence import solve_one_plane

    reg, app, _out = shop
    stored = tmp_path / "c.json"
    save_coefficients(coefficients_from(solve_one_plane("4.20 mm/s@285", "10 g@0", "6.1237 mm/s@251.49",
                                                        radius="200 mm")), stored)
    text = job_text(planes=(("plane", "250 mm", "200 mm", "drill", ""),), com="250 mm",
                    measurement=f'[measurement]\nkind = "coefficients"\ncoefficients = "{stored.as_posix()}"\n'
                                'original = ["4.20 mm/s@285"]\n')
    _order, rec = R.record_job(reg, text)
    number = rec["order_number"]
    client, token = _client(app, "operator")
    start = _fields(client.get(f"/jobs/{number}/trim").text)
    assert start["before"] == "4.20 mm/s@285" and start["installed"].startswith("plane=")
    done = client.post(f"/jobs/{number}/trim", data={"csrf": token, "go": "compute", **start, "after": "0.5 mm/s@100"})
    assert done.status_code == 200 and 'id="trim-result"' in done.text
    stored.unlink()
    gone = client.get(f"/jobs/{number}/trim")
    assert gone.status_code == 409 and "no trim run can start from it here" in gone.text


def test_leaving_the_trim_page_and_coming_back_keeps_what_was_typed(shop):
    reg, app, _out = shop
    number = _record(app)
    client, token = _client(app, "operator")
    typed = "drive-end hub=60 g@300\nfan-end rim=3 g"
    assert client.post(f"/jobs/{number}/trim", data={"csrf": token, "go": "compute", "after": typed}).status_code == 422
    client.get(f"/jobs/{number}")                                   # back to the job ...
    assert _fields(client.get(f"/jobs/{number}/trim").text)["after"] == typed  # ... and forward again
    assert client.post(f"/jobs/{number}/trim", data={"csrf": token, "go": "record",
                                                     "after": "drive-end hub=60 g@300\nfan-end rim=3 g@20"}
                       ).status_code == 303
    assert _fields(client.get(f"/jobs/{number}/trim").text)["after"] == ""  # the next trim starts afresh


def test_a_trial_mass_left_on_counts_as_installed(shop):
    import cmath
    import math

    reg, app, _out = shop
    number = _record(app, **RUNS, trials_left_on="on")
    client, _token = _client(app, "operator")
    installed = dict(line.split("=", 1) for line in _fields(client.get(f"/jobs/{number}/trim").text)["installed"]
                     .splitlines())
    rim = next(p for p in R.job_detail(reg, number)["workorder"]["planes"] if p["name"] == "fan-end rim")
    planned = sum((cmath.rect(op["unbalance_g_mm"] * (1 if op["action"] == "add" else -1),
                              math.radians(op["angle_deg"])) for op in rim["operations"]), 0j) / rim["radius_mm"]
    expected = planned + cmath.rect(25.0, math.radians(90.0))  # the last run's trial mass stays on
    amount, _at, angle = installed["fan-end rim"].partition(" g@")
    got = cmath.rect(float(amount), math.radians(float(angle)))
    assert abs(got - expected) < 0.01 * abs(expected)


def test_the_trim_page_draws_the_readings_after_and_the_trim_with_units_and_sense(shop):
    import xml.etree.ElementTree as ET

    reg, app, _out = shop
    number = _record(app)
    client, token = _client(app, "operator")
    page = client.post(f"/jobs/{number}/trim", data={"csrf": token, "go": "compute",
                                                     "after": "drive-end hub=60 g@300\nfan-end rim=3 g@20"})
    (svg,) = [ET.fromstring(s) for s in re.findall(r"<svg\b.*?</svg>", page.text, re.S)]
    words = " ".join(" ".join("".join(t.itertext()) for t in svg.iter("{http://www.w3.org/2000/svg}text")).split())
    assert "plane drive-end hub, after: reading 60.00 g at 300°" in words
    assert "trim, plane drive-end hub: correction remove 60.00 g at 300°" in words  # in the unit typed, at 160 mm
    assert "allowance circle" in words and "counted against rotation" in words and "0° = keyway" in words
    assert "trim, plane fan-end rim" not in words  # within its limit: no trim there
