"""The web page in a real browser (headless Chromium via Selenium) against ``reflib serve`` on a
free 127.0.0.1 port: upload a demo crude, see the verdict and the plot, add a compound, see it
listed. The crude and its expected identity are the invented demo scenario
(demo_data/crudes/expected.csv)."""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from web_browser import browser_missing, chromium, running_server  # scripts/ (conftest)

DEMO = Path(__file__).resolve().parents[2] / "demo_data"

pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def browser():
    why = browser_missing()
    if why:
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail(why)  # .ci/run installs chromium and chromium-driver
        pytest.skip(why)
    with chromium() as driver:
        yield driver


def test_search_then_add_then_list(browser, demo_library):
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support import expected_conditions as ec
    from selenium.webdriver.support.ui import WebDriverWait

    wait = WebDriverWait(browser, 60)
    with running_server(demo_library) as url:
        browser.get(url + "/")
        assert "evidence, not proof of identity" in browser.page_source
        browser.find_element(By.ID, "file").send_keys(
            str(DEMO / "crudes" / "AO-214-03-crude-nujol.jdx")
        )
        browser.find_element(By.ID, "prep").send_keys("nujol")
        browser.find_element(By.ID, "run-search").click()
        verdict = wait.until(ec.presence_of_element_located((By.ID, "verdict")))
        assert "confident" in verdict.text.lower()
        first = browser.find_element(By.CSS_SELECTOR, "#hits tbody tr td:nth-child(3)")
        assert first.text == "1-(4-ethynylphenyl)ethan-1-one"  # expected.csv
        img = browser.find_element(By.CSS_SELECTOR, "#plot img")
        # the plot really rendered: the browser decoded the SVG to a picture with a size
        assert browser.execute_script("return arguments[0].naturalWidth", img) > 100

        browser.get(url + "/add")
        browser.find_element(By.ID, "add-file").send_keys(
            str(DEMO / "crudes" / "XX-001-unknown-kbr.jdx")
        )
        browser.find_element(By.ID, "name").send_keys("neighbour's compound XX-1")
        browser.find_element(By.ID, "smiles").send_keys("OC(=O)c1ccccc1")
        browser.find_element(By.ID, "prep").send_keys("kbr")
        browser.find_element(By.ID, "run-add").click()
        ok = wait.until(ec.presence_of_element_located((By.CLASS_NAME, "ok")))
        assert "New compound" in ok.text

        browser.get(url + "/library")
        names = [
            td.text for td in browser.find_elements(By.CSS_SELECTOR, "#compounds td:nth-child(2)")
        ]
        assert "neighbour's compound XX-1" in names
