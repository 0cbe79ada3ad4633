"""A phone-sized headless Chromium opens a site's link, fills the shadow form, sends it and sees the verdict."""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import pytest
from tests.collect.client import Server, request
from tests.collect.test_serve import collecting_campaign

pytestmark = pytest.mark.loopback

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
DRIVER = shutil.which("chromedriver")
#: A phone's viewport in CSS pixels (a common 6.1-inch phone, portrait; common practice).
PHONE = (390, 844)


def phone_options():
    """Headless Chromium with a phone's viewport (a desktop window is wider than a phone in new headless mode)."""
    from selenium import webdriver

    options = webdriver.ChromeOptions()
    options.binary_location = CHROMIUM
    for argument in ("--headless=new", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
                     f"--window-size={PHONE[0]},{PHONE[1]}", "--no-first-run", "--disable-extensions"):
        options.add_argument(argument)
    options.add_experimental_option("mobileEmulation", {"deviceMetrics": {"width": PHONE[0], "height": PHONE[1],
                                                                          "pixelRatio": 1.0}})
    return options


def _press(driver, css: str) -> str:
    """Press the form's button as a thumb would (scrolled into view) and wait for the page's verdict."""
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.ui import WebDriverWait

    button = driver.find_element(By.CSS_SELECTOR, css)
    driver.execute_script("arguments[0].scrollIntoView()", button)
    button.click()
    return WebDriverWait(driver, 30).until(lambda d: d.find_element(By.ID, "verdict")).text


@pytest.mark.skipif(CHROMIUM is None or DRIVER is None,
                    reason="Debian's chromium and chromium-driver are not installed (.ci/run installs them)")
def test_a_phone_sends_a_shadow_reading_and_sees_the_verdict(tmp_path):
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.ui import Select, WebDriverWait

    campaign = collecting_campaign(tmp_path, "shadows = []\neclipse = []\n")
    options = phone_options()
    with Server(campaign, tmp_path / "store.sqlite", tmp_path / "links.json") as server:
        driver = webdriver.Chrome(service=Service(DRIVER), options=options)
        try:
            driver.get(server.links["sites"]["lowmead"])
            time_field = WebDriverWait(driver, 30).until(
                lambda d: d.find_element(By.ID, "shadows-value:time_utc"))
            assert "Local apparent noon" in driver.page_source
            # a phone's datetime-local field: set its value as the picker would
            driver.execute_script("arguments[0].value = '2027-03-20T12:25:00'", time_field)
            Select(driver.find_element(By.NAME, "column:shadow_m")).select_by_value("shadow_mm")
            driver.find_element(By.ID, "shadows-value:shadow_m").send_keys("1661")
            verdict = _press(driver, "#kind-shadows button")
            assert verdict.startswith("Stored")
            assert "Looks right." in verdict or "look again" in verdict
            driver.execute_script("window.scrollTo(0, 0)")
            shot = Path(os.environ.get("FIRSTRUNG_SCREENSHOT", tmp_path / "phone.png"))
            driver.save_screenshot(str(shot))
            assert shot.stat().st_size > 10_000
            log = request(server.links["coordinator"] + "/logs/shadows.csv").text
            assert "lowmead,2027-03-20T12:25,1661" in log  # the field's value as the browser sends it
        finally:
            driver.quit()


@pytest.mark.skipif(CHROMIUM is None or DRIVER is None,
                    reason="Debian's chromium and chromium-driver are not installed (.ci/run installs them)")
def test_a_phone_joins_an_open_network_and_sends_from_its_own_link(tmp_path):
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.ui import Select, WebDriverWait

    campaign = tmp_path / "campaign.toml"
    campaign.write_text('[campaign]\nname = "Open network (invented)"\n\n[logs]\nshadows = []\n', encoding="utf-8")
    options = phone_options()
    with Server(campaign, tmp_path / "store.sqlite", tmp_path / "links.json") as server:
        driver = webdriver.Chrome(service=Service(DRIVER), options=options)
        try:
            driver.get(server.links["join"])
            name = WebDriverWait(driver, 30).until(lambda d: d.find_element(By.ID, "join-name"))
            assert "safety officer" in driver.page_source
            name.send_keys("Ridge School")
            driver.find_element(By.ID, "join-latitude_deg").send_keys("47,8012")  # a phone's decimal comma
            driver.find_element(By.ID, "join-longitude_deg").send_keys("8.9034")
            driver.find_element(By.ID, "join-value:gnomon_m").send_keys("120")
            Select(driver.find_element(By.NAME, "column:gnomon_m")).select_by_value("gnomon_cm")
            driver.find_element(By.ID, "join-timezone").send_keys("Europe/Zurich")
            verdict = _press(driver, "form button")
            assert verdict.startswith("Joined.") and "site ridge-school" in verdict
            link = driver.find_element(By.ID, "school-link").get_attribute("href")
            shot = Path(os.environ.get("FIRSTRUNG_SCREENSHOT_JOIN", tmp_path / "join.png"))
            driver.save_screenshot(str(shot))
            assert shot.stat().st_size > 10_000
            driver.get(link)
            time_field = WebDriverWait(driver, 30).until(lambda d: d.find_element(By.ID, "shadows-value:time_utc"))
            assert "Ridge School" in driver.page_source and "Local apparent noon" in driver.page_source
            driver.execute_script("arguments[0].value = '2027-03-20T12:33:00'", time_field)
            driver.find_element(By.ID, "shadows-value:shadow_m").send_keys("133.0")
            verdict = _press(driver, "#kind-shadows button")
            assert verdict.startswith("Stored") and "Looks right." in verdict
            log = request(server.links["coordinator"] + "/logs/shadows.csv").text
            assert "Ridge School,2027-03-20T12:33,133.0,120,47.8012,8.9034,Europe/Zurich" in log
        finally:
            driver.quit()
