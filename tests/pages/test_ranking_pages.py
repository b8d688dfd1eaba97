"""Rankings pages: start from the form, progress block while running, results equal the API, filters, Pareto."""

from __future__ import annotations

import time

import pytest
from bs4 import BeautifulSoup
from fastapi import FastAPI
from fastapi.testclient import TestClient

from server.services import seed
from tests.factories import login


@pytest.mark.demo_data
def test_rank_in_the_browser_and_read_the_results(app: FastAPI, client: TestClient) -> None:
    token = login(client, seed.DEMO_LOGIN[0], seed.DEMO_LOGIN[1])
    index = BeautifulSoup(client.get("/rankings").text, "html.parser")
    mission_id = next(o["value"] for o in index.select("#mission_id option") if o.text == "Q4 mapping survey")
    started = client.post("/rankings", data={"csrf_token": token, "mission_id": mission_id,
                                             "objective": "cruise_power", "top_n": "30"}, follow_redirects=False)
    assert started.status_code == 303
    url = started.headers["location"]
    ranking_id = int(url.rsplit("/", 1)[1])
    deadline = time.monotonic() + 60
    while True:
        block = client.get(url, headers={"HX-Request": "true", "HX-Target": "ranking-job"})
        fragment = BeautifulSoup(block.text, "html.parser")
        assert fragment.select_one("html") is None
        if fragment.select_one("#ranking-progress") is None:
            break
        assert fragment.select_one("[hx-trigger]") is not None  # keeps polling while running
        assert time.monotonic() < deadline
        time.sleep(0.05)
    page = BeautifulSoup(client.get(url).text, "html.parser")
    api = client.get(f"/api/v1/rankings/{ranking_id}/results").json()["items"]
    rows = page.select("#results tbody tr")
    assert len(rows) == len(api) == 30
    for row, item in zip(rows, api, strict=True):
        cells = row.select("td")
        assert cells[0].select_one(".rank").text == str(item["rank"])
        assert cells[7].contents[0].strip() == f"{item['cruise']['electrical_power_w']:.3g}".replace(",", "")
        lo, hi = item["cruise"]["electrical_power_w_band"]
        assert cells[7].select_one(".band").text.replace("\u2009", "") == f"{lo:.3g}–{hi:.3g}".replace(",", "")
        why = cells[0].select_one("a")["href"]
        assert f"ranking_id={ranking_id}" in why and f"esc_id={item['esc_id']}" in why
        assert ("same-as-best" in (row.get("class") or [])) == bool(item["indistinguishable_from_best"])
        assert bool(row.select(".assumed")) == any(item["assumed"].values())
    rejections = page.select_one("#rejections").text
    assert "thrust-to-weight below the mission's minimum 2.00" in rejections
    assert page.select_one("#pareto-chart-data") is not None
    filtered = BeautifulSoup(client.get(f"{url}?cells=4&sort=-endurance_min",
                                        headers={"HX-Request": "true", "HX-Target": "ranking-results"}).text,
                             "html.parser")
    assert filtered.select_one("#ranking-results") is not None and filtered.select_one("#ranking-summary") is None
    packs = [r.select("td")[1].text for r in filtered.select("#results tbody tr")]
    assert packs and all("4S" in p for p in packs)
    added = client.post(f"{url}/shortlist", data={"csrf_token": token, "rank": "1", "shortlist_id": ""},
                        headers={"HX-Request": "true"})
    assert "added" in added.text
    shortlists = client.get("/api/v1/shortlists").json()
    assert shortlists[0]["entries"][0]["ranking_id"] == ranking_id


@pytest.mark.demo_data
def test_why_this_verdict_from_a_row_a_rejection_count_and_the_why_not_form(app: FastAPI, client: TestClient) -> None:
    """Every way to the explain page gives the ranking engine's verdict: a ranked row passes every limit, a rejection
    example fails first on the limit it is listed under, the form explains any combination, bad ids say what."""
    from server.models import Mission, Ranking
    from server.services import rankings as rankings_service

    login(client, seed.DEMO_LOGIN[0], seed.DEMO_LOGIN[1])
    with app.state.sessionmaker() as session:
        mission = session.query(Mission).filter(Mission.name == "Q4 mapping survey").one()
        ranking = rankings_service.start(session, team_id=mission.team_id, user_id=None, mission_id=mission.id,
                                         objective="cruise_power", top_n=10)
        session.commit()
        ranking_id = ranking.id
    rankings_service.run(app.state.sessionmaker, ranking_id)
    page = BeautifulSoup(client.get(f"/rankings/{ranking_id}").text, "html.parser")
    why = page.select_one("#results tbody tr a")["href"]
    verdict = BeautifulSoup(client.get(why).text, "html.parser")
    assert verdict.select_one("#verdict h2").text.strip() == "Passes every limit"
    checks_text = verdict.select_one("#checks").text
    assert "hover thrust" in checks_text and "cruise thrust" not in checks_text
    assert len(verdict.select("#checks tbody tr")) == len(rankings_service.REASON_TEXT)
    assert verdict.select_one("#numbers .band") is not None  # the row's bands
    examples = page.select("details.reason-examples")
    assert examples
    with app.state.sessionmaker() as session:
        stored = session.get(Ranking, ranking_id)
        assert stored is not None
        rejected = {r: c for r, c in stored.rejected.items() if c}
    for details in examples:
        reason = details.find_parent("li")["data-reason"]
        assert reason in rejected
        link = details.select_one("a")["href"]
        shown = BeautifulSoup(client.get(link).text, "html.parser")
        words = rankings_service.reason_text("hover")[reason]
        assert shown.select_one("#verdict h2").text.strip() == f"Rejected: {words}"
        assert "first-failed" in shown.select("#checks tbody tr")[list(rankings_service.REASON_TEXT).index(reason)][
            "class"]
    form = page.select_one("#why-not form")
    props = [o.text for o in form.select("select[name=propeller_id] option")]
    assert props.index("5x2.5 multirotor prop") < props.index("10x4.5 multirotor prop")  # natural order
    fields = {s["name"]: s.select("option")[-1]["value"] for s in form.select("select")}
    answer = client.get("/explain", params={"ranking_id": ranking_id, **fields, "packs_in_parallel": 1})
    assert answer.status_code == 200 and "#verdict" not in answer.text
    assert BeautifulSoup(answer.text, "html.parser").select_one("#verdict h2") is not None
    bad = client.get("/explain", params={"ranking_id": ranking_id, **fields, "motor_id": 999999})
    assert bad.status_code == 422 and "was not in ranking" in bad.text
    blank = client.get("/explain", params={"ranking_id": ranking_id, "motor_id": fields["motor_id"]})
    assert blank.status_code == 422 and "Choose a pack, an ESC, a motor and a propeller" in blank.text
    alone = client.get("/explain")
    assert alone.status_code == 200 and BeautifulSoup(alone.text, "html.parser").select_one("#mission_id")


@pytest.mark.demo_data
def test_progress_polls_without_the_cancel_button_and_announces_the_end(app: FastAPI, client: TestClient) -> None:
    from server.db import transaction
    from server.services import missions as missions_service
    from server.services import rankings as rankings_service
    from server.services import teams

    with transaction(app.state.sessionmaker) as session:  # queued, never submitted: it stays queued
        team = teams.get_team_by_name(session, name="Northfold Survey")
        mission = next(m for m in missions_service.list_missions(session, team_id=team.id))
        ranking_id = rankings_service.start(session, team_id=team.id, user_id=None, mission_id=mission.id,
                                            objective="cruise_power", top_n=5).id
    token = login(client, seed.DEMO_LOGIN[0], seed.DEMO_LOGIN[1])
    page = BeautifulSoup(client.get(f"/rankings/{ranking_id}").text, "html.parser")
    live = page.select_one("#ranking-live")
    assert live["hx-get"] == f"/rankings/{ranking_id}/progress" and live.select_one("button") is None
    assert page.select_one("form[action$='/cancel'] button") is not None  # outside the polled element
    bar = page.select_one("[role=progressbar]")
    assert bar["aria-label"] == "Ranking progress" and bar["aria-valuetext"] == "0 %"
    assert page.select_one("#job-announce[aria-live=polite]") is not None
    polled = client.get(f"/rankings/{ranking_id}/progress", headers={"HX-Request": "true"})
    fragment = BeautifulSoup(polled.text, "html.parser")
    assert fragment.select_one("#ranking-live") is not None and fragment.select_one("button, form") is None
    assert "hx-retarget" not in polled.headers
    client.post(f"/rankings/{ranking_id}/cancel", data={"csrf_token": token})
    ended = client.get(f"/rankings/{ranking_id}/progress", headers={"HX-Request": "true"})
    assert ended.headers["hx-retarget"] == "#ranking-job" and ended.headers["hx-reswap"] == "outerHTML"
    done = BeautifulSoup(ended.text, "html.parser")
    assert done.select_one("#job-announce[hx-swap-oob]").text == "Ranking cancelled."
    assert done.select_one("#ranking-live") is None
