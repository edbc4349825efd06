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
from pathlib import Path

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


# -- each error beside its field, by the error's parameter ---------------------------------------------------

def _errors(text: str) -> dict:
    """The error shown beside each field (and above the form, ``""``)."""
    found = {k: unescape(v) for k, v in re.findall(r'<p class="error" id="err-(\w+)"[^>]*>([^<]*)</p>', text)}
    top = re.search(r'<p class="error" role="alert">([^<]*)</p>', text)
    return found | ({"": unescape(top.group(1))} if top else {})


#: (field, [(typed, the error beside it)]): a reading's place among the readings is worded as its line in
#: the field, blank lines counted; a problem with the whole field has no line.
COEFFICIENT_ERRORS = [
    ("before", [("4.2 mm/s@285\n\n3.1@40", r"line 3: '3\.1' has no unit"),
                ("4.2 mm/s@285\n3.1 mm/s@north", r"line 2: 'north' is not an angle"),
                ("4.2 mm/s@285", r"give 2 reading\(s\), one per sensor \(near, far\)")]),
    ("installed", [("drive-end hub=3 g@10\nfan-end rim=3 mm@10", r"line 2: .*3 mm.* is not a mass"),   # the library's
                   ("drive-end hub=3 g@10\nfan-end rim=3 g@west", r"line 2: 'west' is not an angle"),  # "installed PLANE"
                   ("drive-end hub=0 g@10", r"all masses are zero")]),
    ("installed", [("drive-end hub 3 g@10", r"line 1: 'drive-end hub 3 g@10' is not PLANE=MASS@ANGLE"),
                   ("drive-end hub=3 g@10\n\nno such plane=3 g@10", r"line 3: unknown plane 'no such plane'"),
                   ("drive-end hub=3 g@10\ndrive-end hub=4 g@10", r"line 2: plane drive-end hub is given on line 1")]),
    ("after", [("0.9 mm/s@100\n2 um@200", r"line 2: '2 um@200' is a displacement; the coefficients are for vibration"),
               ("0.9 mm/s@100", r"give 2 reading\(s\)"),
               ("4.2 mm/s@285\n3.1 mm/s@40", r"identical to readings before the installed correction")]),
]


@pytest.mark.parametrize("field, typed, expected", [(f, t, e) for f, rows in COEFFICIENT_ERRORS for t, e in rows])
def test_a_coefficient_trim_puts_each_error_beside_its_field_with_the_line(shop, field, typed, expected):
    _reg, app, _out = shop
    number = _record(app, **RUNS)
    client, token = _client(app, "operator")
    start = _fields(client.get(f"/jobs/{number}/trim").text)
    given = {**start, "after": "0.9 mm/s@100\n0.7 mm/s@200", field: typed}
    page = client.post(f"/jobs/{number}/trim", data={"csrf": token, "go": "compute", **given})
    assert page.status_code == 422
    errors = _errors(page.text)
    assert list(errors) == [field], errors  # beside that field only
    assert re.match(expected, errors[field]), errors[field]
    assert _fields(page.text) == given  # what was typed comes back


#: (what is wrong, [(typed, the error beside the readings after)])
MACHINE_ERRORS = [
    ("a reading", [("drive-end hub=60 g@300\nfan-end rim=3 g", r"line 2: '3 g' is not a vector"),
                   ("drive-end hub=60 g@300\n\nfan-end rim=3 mm@20",
                    r"line 3: '3 mm' is not a unbalance .*a mass at the plane"),
                   ("drive-end hub=60 g@300\nfan-end rim=3 g@east", r"line 2: 'east' is not an angle")]),
    ("the planes", [("middle=60 g@300\nfan-end rim=3 g@20", r"line 1: 'middle=60 g@300': give PLANE=AMOUNT@ANGLE"),
                    ("drive-end hub=60 g@300\ndrive-end hub=3 g@20", r"line 2: plane drive-end hub is given on line 1"),
                    ("drive-end hub=60 g@300", r"no reading for plane\(s\) fan-end rim")]),
]


@pytest.mark.parametrize("typed, expected", [(t, e) for _what, rows in MACHINE_ERRORS for t, e in rows])
def test_a_machine_trim_puts_each_error_beside_the_readings_with_the_line(shop, typed, expected):
    reg, app, _out = shop
    number = _record(app)
    client, token = _client(app, "operator")
    page = client.post(f"/jobs/{number}/trim", data={"csrf": token, "go": "record", "after": typed})
    assert page.status_code == 422
    errors = _errors(page.text)
    assert list(errors) == ["after"], errors
    assert re.match(expected, errors["after"]), errors["after"]
    assert R.job_detail(reg, number)["trims"] == []


def test_the_library_names_the_parameter_the_trim_page_places():
    # the parameters the library gives (the field, then the item: "after 2", "installed near angle") are
    # what the page places; nothing is read from the message text
    from toolkit.coefficients import coefficients_from, trim_update
    from toolkit.influence import solve_one_plane
    from toolkit.web.trim import _placed

    c = coefficients_from(solve_one_plane("4.20 mm/s@285", "10 g@0", "6.1237 mm/s@251.49"))
    items = {"before": {"1": 1}, "after": {"1": 4}, "installed": {"plane": 2}}
    cases = [((["4.2@285"], {"plane": "6 g@255"}, ["0.4 mm/s@285"]), "before 1", {"before": "line 1: "}),
             ((["2.1 mm/s@285"], {"plane": "6 g@up"}, ["0.4 mm/s@285"]), "installed plane angle",
              {"installed": "line 2: "}),
             ((["2.1 mm/s@285"], {"plane": "6 g@255"}, ["0.4 um@285"]), "after 1", {"after": "line 4: "}),
             ((["2.1 mm/s@285"], {"plane": "6 g@255"}, ["2.1 mm/s@285"]), "after", {"after": "identical to "})]
    for args, parameter, placed in cases:
        with pytest.raises(BadInput) as caught:
            trim_update(c, *args)
        assert caught.value.parameter == parameter
        (field, words), = _placed(caught.value, items).items()
        assert {field: words[:len(placed[field])]} == placed
    assert _placed(BadInput("run: singular data"), items) == {"": "run: singular data"}  # about no field


# -- storing a trim's updated coefficients as a new set of the job's rotor type -------------------------------

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"
FAN_ORIGINAL = ["17.50 um@253.7", "15.28 um@52.2", "32.89 um@290.3", "24.74 um@93.3"]  # invented readings
FAN_AFTER = "18.50 um@250.0\n15.00 um@50.0\n34.00 um@288.0\n24.00 um@92.0"              # invented readings


def _fan_type(reg, with_set: bool = True) -> int | None:
    """The invented exhaust-fan type of the examples, with its coefficients from the invented runs stored."""
    R.save_type(reg, "exhaust fan", (EXAMPLES / "job-fan-runs.toml").read_text(encoding="utf-8"))
    if not with_set:
        return None
    return R.store_coefficients(reg, "exhaust fan", _runs_set(), provenance={"jobs": ["invented"]})["set"]


def _one_run_job(reg) -> str:
    from toolkit.register.oneshot import balance_from_type

    _order, record = balance_from_type(reg, "exhaust fan", serial="SN-invented-2", original=FAN_ORIGINAL)
    return record["order_number"]


def _fan_job(reg, app):
    """A one-run job of the exhaust-fan type with its set stored, an operator's client and its trim form."""
    _fan_type(reg)
    number = _one_run_job(reg)
    client, token = _client(app, "operator")
    return number, client, token, _fields(client.get(f"/jobs/{number}/trim").text)


def _box(text: str) -> bool | None:
    """None: the page offers no box; else whether the box is ticked."""
    box = re.search(r'<input type="checkbox" name="store_coefficients"[^>]*>', text)
    return None if box is None else " checked" in box.group(0)


def _computed(client, token, number, after, **extra) -> str:
    """The trim page worked out from the prefilled fields and the readings ``after`` (offered with a result)."""
    fields = _fields(client.get(f"/jobs/{number}/trim").text)
    page = client.post(f"/jobs/{number}/trim", data={"csrf": token, "go": "compute", **fields, "after": after,
                                                     **extra})
    assert page.status_code == 200, page.text[-3000:]
    return page.text


def test_a_one_run_job_trims_from_its_register_set_and_stores_the_update_when_asked(shop, capsys):
    reg, app, _out = shop
    first = _fan_type(reg)
    number = _one_run_job(reg)
    client, token = _client(app, "operator")
    start = client.get(f"/jobs/{number}/trim")
    assert start.status_code == 200 and f"from coefficient set {first} of the register" in start.text
    assert _box(start.text) is None  # offered with the worked-out trim, beside its record button
    fields = _fields(start.text)
    assert fields["before"].splitlines() == FAN_ORIGINAL
    assert _box(_computed(client, token, number, FAN_AFTER)) is False  # off unless ticked
    # computing with the box ticked stores nothing, and the tick comes back with the page
    assert _box(_computed(client, token, number, FAN_AFTER, store_coefficients="on")) is True
    assert len(R.coefficient_history(reg, "exhaust fan")) == 1
    # the command line's register trim of the same readings first: it updates the newest set, which is the
    # one this job started from
    argv = ["register", "trim", "exhaust fan", "--register", str(reg.url.database), "--job", number, "--json"]
    for line in fields["installed"].splitlines():
        argv += ["--installed", line]
    for b, a in zip(FAN_ORIGINAL, FAN_AFTER.splitlines()):
        argv += ["--before", b, "--after", a]
    assert main(argv) == 0
    by_cli = json.loads(capsys.readouterr().out)
    assert (by_cli["set"], by_cli["parent"]) == (first + 1, first)
    done = client.post(f"/jobs/{number}/trim", data={"csrf": token, "go": "record", **fields, "after": FAN_AFTER,
                                                     "store_coefficients": "on"})
    assert done.status_code == 303
    history = R.coefficient_history(reg, "exhaust fan")
    # a new set, its parent the set the trim started from (not merely the newest); nothing earlier changed
    assert [(h["set"], h["reason"], h["parent"]) for h in history] == [
        (first, "measured", None), (first + 1, "trim", first), (first + 2, "trim", first)]
    kept = R.coefficient_set(reg, first)["coefficients"].array()
    assert abs(kept - _runs_set().array()).max() <= 1e-9 * abs(kept).max()  # the set started from: unchanged
    trim = R.job_detail(reg, number)["trims"][0]
    assert trim["data"]["coefficient_set"] == {"set": first + 2, "type": "exhaust fan", "parent": first}
    provenance = history[2]["provenance"]["trim"]
    assert (provenance["job"], provenance["step"], provenance["source"]) == (number, 1, "browser")
    assert provenance["after"] == FAN_AFTER.splitlines() and provenance["before"] == FAN_ORIGINAL
    # the stored set is the trim's updated coefficients shown on the page, and the command line's update
    stored = R.coefficient_set(reg, first + 2)["coefficients"]
    cli = R.coefficient_set(reg, first + 1)["coefficients"]
    shown_rows = trim["data"]["updated_coefficients"]["matrix"]
    for row, mine, theirs in zip(stored.matrix, shown_rows, cli.matrix):
        for z, (real, imag), w in zip(row, mine, theirs):
            assert z == pytest.approx(complex(real, imag), rel=1e-9) and z == pytest.approx(w, rel=1e-6)
    assert (stored.sensors, stored.planes) == (cli.sensors, cli.planes)
    job_page = client.get(f"/jobs/{number}?done=trim").text
    assert f"Coefficient set {first + 2} stored for type exhaust fan" in job_page
    # the next trim starts from the stored set and would store its update under it
    second = _computed(client, token, number, "18 um@250\n15 um@50\n33 um@288\n24 um@92")
    assert f"coefficient set {first + 2})" in second and f"whose parent is set {first + 2}" in second


def test_without_the_box_a_trim_stores_no_set(shop):
    reg, app, _out = shop
    number, client, token, fields = _fan_job(reg, app)
    done = client.post(f"/jobs/{number}/trim", data={"csrf": token, "go": "record", **fields, "after": FAN_AFTER})
    assert done.status_code == 303 and len(R.coefficient_history(reg, "exhaust fan")) == 1
    trim = R.job_detail(reg, number)["trims"][0]
    assert "coefficient_set" not in trim["data"]
    assert "stored for type" not in client.get(f"/jobs/{number}?done=trim").text


def test_storing_is_refused_without_the_token_without_a_session_and_for_a_role_that_may_not(shop):
    from toolkit.web import accounts as A

    reg, app, _out = shop
    number, client, token, fields = _fan_job(reg, app)
    data = {"go": "record", **fields, "after": FAN_AFTER, "store_coefficients": "on"}
    assert client.post(f"/jobs/{number}/trim", data=data).status_code == 403                    # no token
    assert client.post(f"/jobs/{number}/trim", data={**data, "csrf": token[::-1]}).status_code == 403
    anonymous, atoken = _client(app)
    assert anonymous.post(f"/jobs/{number}/trim", data={**data, "csrf": atoken}).status_code == 401  # no session
    refused = [role for role in ("operator", "machinist", "planner", "inspector", "administrator")
               if not A.may(role, "check")]
    assert refused == ["planner"]
    for role in refused:
        person, ptoken = _client(app, role)
        page = person.post(f"/jobs/{number}/trim", data={**data, "csrf": ptoken})
        assert page.status_code == 403 and "may not" in page.text
    assert len(R.coefficient_history(reg, "exhaust fan")) == 1 and R.job_detail(reg, number)["trims"] == []


def test_the_box_is_offered_only_for_a_job_of_a_type_with_a_stored_set(shop):
    reg, app, _out = shop
    client, token = _client(app, "operator")
    # no rotor type: no box
    plain = _record(app, **RUNS)
    page = _computed(client, token, plain, "0.9 mm/s@100\n0.7 mm/s@200")
    assert _box(page) is None and "cannot be stored" not in page
    start = _fields(page)
    crafted = client.post(f"/jobs/{plain}/trim", data={"csrf": token, "go": "record", **start,
                                                       "after": "0.9 mm/s@100\n0.7 mm/s@200",
                                                       "store_coefficients": "on"})
    assert crafted.status_code == 422 and "no rotor type" in crafted.text
    assert R.job_detail(reg, plain)["trims"] == []
    # a type without a stored set: no box, and a crafted tick records nothing
    _fan_type(reg, with_set=False)
    t, text = R.compose_job(reg, "exhaust fan", "")
    _order, rec = R.record_job(reg, text, type_version_id=t["version_id"])
    typed = rec["order_number"]
    page = _computed(client, token, typed, FAN_AFTER)
    assert _box(page) is None and "has no stored coefficient set" in page
    crafted = client.post(f"/jobs/{typed}/trim", data={"csrf": token, "go": "record", **_fields(page),
                                                       "after": FAN_AFTER, "store_coefficients": "on"})
    assert crafted.status_code == 422 and R.job_detail(reg, typed)["trims"] == []
    # a newest set of other sensors: no box, the page says why (one-run balancing reads the newest set's sensors)
    from toolkit.coefficients import coefficients_from
    from toolkit.influence import solve_one_plane

    other = R.store_coefficients(reg, "exhaust fan", coefficients_from(solve_one_plane(
        "4.20 mm/s@285", "10 g@0", "6.1237 mm/s@251.49")))["set"]
    page = unescape(_computed(client, token, typed, FAN_AFTER))
    assert _box(page) is None and f"sensors (drive end 990 rpm, free end 990 rpm, drive end 1480 rpm, free end " \
        f"1480 rpm) differ from those of set {other} of type exhaust fan (sensor)" in page
    # the same type once its newest set fits: a trial-run job's trim may store its update, a set with no parent
    # (it started from the job's own trial runs, not from a stored set)
    first = R.store_coefficients(reg, "exhaust fan", _runs_set(), provenance={"jobs": ["invented"]})["set"]
    page = _computed(client, token, typed, FAN_AFTER)
    assert _box(page) is False and "from the job's trial-mass runs" in unescape(page)
    assert "whose parent is set" not in page
    done = client.post(f"/jobs/{typed}/trim", data={"csrf": token, "go": "record", **_fields(page),
                                                    "after": FAN_AFTER, "store_coefficients": "on"})
    assert done.status_code == 303
    newest = R.coefficient_history(reg, "exhaust fan")[-1]
    assert newest["set"] == first + 1 and newest["parent"] is None and newest["reason"] == "trim"
    assert newest["provenance"]["trim"]["job"] == typed
    # a machine trim has no coefficients: no box
    assert _box(_computed(client, token, _record(app), "drive-end hub=60 g@300\nfan-end rim=3 g@20")) is None


def _runs_set():
    """The coefficients of the invented two-plane runs of the examples."""
    from toolkit.coefficients import coefficients_from
    from toolkit.influence import solve_runs
    from toolkit.runs import load_runs

    return coefficients_from(solve_runs(load_runs(EXAMPLES / "runs-two-plane.toml")))
