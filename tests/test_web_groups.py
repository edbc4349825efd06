"""The tolerance form's folding groups: the common case is short, a group opens by itself when one of its
fields has a problem (the message beside the field) or holds a value of the person's own, and a folded
group is still sent, so nothing typed is lost.

Behaviour checks only: no published check value here, so none needs a source.
"""

from __future__ import annotations

import re

import pytest
from starlette.testclient import TestClient

from toolkit.register.store import open_register
from toolkit.web.app import create_app
from toolkit.web.forms import PAGES
from toolkit.web.groups import GROUPS

BASE = {"grade": "G6.3", "mass": "412 kg", "speed": "1480 rpm", "bearing_span": "900 mm", "com_from_a": "400 mm",
        "plane": "I=-120 mm\nII=1010 mm"}


@pytest.fixture
def client(tmp_path):
    reg = open_register(tmp_path / "register.sqlite3")
    yield TestClient(create_app(reg, out=tmp_path / "orders"), base_url="http://127.0.0.1:8470")
    reg.close()


def _token(client) -> str:
    return re.search(r'name="csrf" value="([^"]+)"', client.get("/tolerance").text).group(1)


def _details(html: str) -> list[tuple[bool, str]]:
    return [(bool(opened), body) for opened, body in
            re.findall(r'<details class="more"( open)?>(.*?)</details>', html, re.S)]


def test_the_common_case_comes_first_and_the_rest_folds_away(client):
    page = client.get("/tolerance").text
    groups = _details(page)
    assert [opened for opened, _b in groups] == [False, False]
    outside = re.sub(r"<details.*?</details>", "", page, flags=re.S)
    for name in ("grade", "mass", "speed", "bearing_span", "com_from_a", "plane"):
        assert f'name="{name}"' in outside
    for (_t, _n, names), (_o, body) in zip(GROUPS["tolerance"], groups):
        for name in names:
            assert f'name="{name}"' in body and f'name="{name}"' not in outside


def test_a_problem_in_a_group_opens_it_with_the_message_beside_the_field(client):
    # as a browser sends it: every choice with its default selected
    page = client.post("/tolerance", data={"csrf": _token(client), **BASE, "one_plane_rule": "whole",
                                           "check_stage": "after-balancing", "residual": "I=850 parsecs"})
    assert page.status_code == 422
    (alloc_open, _a), (check_open, body) = _details(page.text)
    assert check_open and not alloc_open
    assert re.search(r'id="err-residual"[^>]*>I: &#39;850 parsecs&#39; is not a vector', body)
    assert "I=850 parsecs</textarea>" in body


def test_a_folded_group_is_still_sent_and_a_value_of_ones_own_keeps_it_open(client):
    page = client.post("/tolerance", data={"csrf": _token(client), **BASE, "residual": "I=850 g*mm@10"})
    assert page.status_code == 200
    (_alloc, _a), (check_open, body) = _details(page.text)
    assert check_open and "I=850 g*mm@10</textarea>" in body
    assert "residual" in page.text.lower() and re.search(r"850", page.text.split("Full report", 1)[1])
    # the example's own values leave the groups folded after a computation
    again = client.post("/tolerance", data={"csrf": _token(client), **dict(PAGES["tolerance"].example)})
    assert [opened for opened, _b in _details(again.text)] == [False, False]
