"""The study report in a real browser: headless Chromium (Debian's chromium and chromium-driver,
installed by .ci/run) loads report.html, sorts the front table by a number and by a date, shows
the bookkeeping columns when asked, logs no error, and a screenshot is taken."""

from __future__ import annotations

import shutil

import numpy as np
import pandas as pd
import pytest

from models.design import design_from_dict, with_value
from optim.morning.design_plots import plot_pull_vs_gap
from optim.morning.plots import (
    caption_for,
    plot_front_pairs,
    plot_front_progress,
    plot_parameter_coupling,
)
from optim.morning.report import write_report
from tests.conftest import demo_dict
from tests.optim.morning.test_plots_report import OBJECTIVES, PARAMS, PNG_MAGIC, make_trials

CHROMIUM = shutil.which("chromium")
CHROMEDRIVER = shutil.which("chromedriver")

pytestmark = pytest.mark.skipif(
    CHROMIUM is None or CHROMEDRIVER is None,
    reason="needs Debian's chromium and chromium-driver (apt-get install chromium chromium-driver)",
)


def _report(folder):
    """A report from the synthetic study, with its plots, picks and shuffled completion times
    (so that the date order is not the table's order)."""
    trials = make_trials()
    front = trials[trials["on_front"]].reset_index(drop=True)
    rng = np.random.default_rng(5)
    front["completed_at"] = front["completed_at"].to_numpy()[rng.permutation(len(front))]
    front["binding_limit"] = "ring_temperature_C"
    design = design_from_dict(demo_dict())
    images = (
        plot_front_pairs(trials, OBJECTIVES, folder / "plots")
        + plot_front_progress(trials, OBJECTIVES, folder / "plots")
        + plot_parameter_coupling(front, PARAMS, folder / "plots", log=["frequency_Hz"])
        + plot_pull_vs_gap(
            [("trial 1", design), ("trial 2", with_value(design, "ring.outer_radius_mm", 8.5))],
            folder / "plots",
        )
    )
    pngs = [(p, caption_for(p, OBJECTIVES)) for p in images if p.suffix == ".png"]
    summary = {"study": "browser", "trials": 80, "complete": 70, "feasible": 20}
    picks = [("best pull_N", int(front["trial"].iloc[0])), ("knee of the front", 5)]
    path = write_report(
        folder, summary, front, pngs, {"ring_temperature_C": len(front)}, ["a note"],
        objectives=OBJECTIVES, params=PARAMS, picks=picks,
    )  # fmt: skip
    return path, front


@pytest.fixture(scope="module")
def browser():
    webdriver = pytest.importorskip(
        "selenium.webdriver", reason="needs the selenium package (pip install -e '.[test]')"
    )
    from selenium.webdriver.chrome.service import Service

    options = webdriver.ChromeOptions()
    options.binary_location = CHROMIUM
    for arg in ("--headless=new", "--no-sandbox", "--disable-dev-shm-usage", "--disable-gpu"):
        options.add_argument(arg)
    options.add_argument("--window-size=1400,2200")
    options.set_capability("goog:loggingPrefs", {"browser": "ALL"})
    driver = webdriver.Chrome(service=Service(CHROMEDRIVER), options=options)
    try:
        yield driver
    finally:
        driver.quit()


def _column(driver, name: str) -> list[str]:
    """The data-v of column ``name`` of the front table, top to bottom, as the page shows it."""
    return driver.execute_script(
        """
        var t = document.getElementById("front");
        var heads = Array.from(t.tHead.rows[0].cells).map(function (h) { return h.textContent; });
        var i = heads.indexOf(arguments[0]);
        return Array.from(t.tBodies[0].rows).map(function (r) {
          return r.cells[i].getAttribute("data-v"); });
        """,
        name,
    )


def test_report_sorts_numbers_and_dates_in_chromium(browser, tmp_path):
    from selenium.webdriver.common.by import By

    path, front = _report(tmp_path)
    browser.get(path.resolve().as_uri())
    heading = {
        h.get_attribute("textContent"): h
        for h in browser.find_elements(By.CSS_SELECTOR, "#front thead tr:first-child th")
    }
    assert browser.find_element(By.ID, "front").is_displayed()
    assert not heading["completed_at"].is_displayed()  # bookkeeping collapsed
    browser.find_element(By.ID, "show-bookkeeping").click()
    assert heading["completed_at"].is_displayed()

    heading["pull_N"].click()
    assert [float(v) for v in _column(browser, "pull_N")] == sorted(front["pull_N"])
    heading["pull_N"].click()
    assert [float(v) for v in _column(browser, "pull_N")] == sorted(front["pull_N"], reverse=True)

    when = sorted(front["completed_at"])
    heading["completed_at"].click()
    shown = [pd.Timestamp(float(v), unit="s", tz="UTC") for v in _column(browser, "completed_at")]
    assert shown == when
    assert [int(float(t)) for t in _column(browser, "trial")] == list(
        front.sort_values("completed_at")["trial"]
    )
    heading["completed_at"].click()
    assert [int(float(t)) for t in _column(browser, "trial")] == list(
        front.sort_values("completed_at", ascending=False)["trial"]
    )
    # Every embedded plot decoded (an image that fails to load has no natural width).
    widths = browser.execute_script(
        "return Array.from(document.images).map(function (i) { return i.naturalWidth; });"
    )
    assert len(widths) == 5 and all(w > 0 for w in widths)
    errors = [e for e in browser.get_log("browser") if e["level"] in ("SEVERE", "ERROR")]
    assert errors == []

    browser.find_element(By.ID, "show-bookkeeping").click()
    browser.execute_script("window.scrollTo(0, 0);")
    shot = tmp_path / "report.png"
    assert browser.save_screenshot(str(shot))
    assert shot.read_bytes().startswith(PNG_MAGIC) and shot.stat().st_size > 20_000
