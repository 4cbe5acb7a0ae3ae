"""templates/assets/table.js in headless Chromium, pages opened from file://."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

import browser

ROOT = Path(__file__).resolve().parents[1]
TABLE_JS = ROOT / "templates" / "assets" / "table.js"

# name, display text of the power column, data-value (W) or None, status
ROWS = [
    ("Mixer", "59.5", 59500, "pass"),
    ("Compressor", "110", 110000, "fail"),
    ("Pump 2", "7.5", 7500, "warn"),
    ("Pump 10", "22", 22000, "pass"),
    ("Furnace", "1,200.5", 1200500, "warn"),  # as text this would sort first ("1,...")
    ("Lighting", "—", None, "pass"),  # no value: always last
]


def _page(rows=ROWS) -> str:
    body = []
    for name, shown, value, status in rows:
        dv = "" if value is None else f' data-value="{value}"'
        body.append(f'<tr data-status="{status}"><td>{name}</td><td{dv}>{shown}</td>'
                    f'<td>{status}</td></tr>')
    return f"""<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>Loads</title>
<meta http-equiv="Content-Security-Policy" content="default-src 'self'; script-src 'self'">
<script src="table.js" defer></script></head>
<body>
<label>Filter <input id="q" type="search" data-filter-for="loads"></label>
<label>Status <select id="st" data-status-filter-for="loads">
  <option value="all">all</option><option value="pass">pass</option>
  <option value="warn">warn</option><option value="fail">fail</option>
  <option value="warn fail">warn or fail</option></select></label>
<span id="count" data-count-for="loads"></span>
<p id="empty" data-empty-for="loads" hidden>No rows match.</p>
<table id="loads" data-sortable>
<thead><tr><th id="h-name">Load</th><th id="h-p">Power (kW)</th><th id="h-s" data-nosort>Status</th></tr></thead>
<tbody>
{chr(10).join(body)}
</tbody></table>
</body></html>
"""


@pytest.fixture(scope="module")
def driver():
    with browser.chrome() as d:
        yield d


@pytest.fixture
def site(tmp_path):
    shutil.copy(TABLE_JS, tmp_path / "table.js")
    (tmp_path / "loads.html").write_text(_page(), encoding="utf-8")
    return tmp_path


def _names(driver) -> list[str]:
    """First-cell text of every body row, in document order."""
    return driver.execute_script(
        "return Array.from(document.querySelectorAll('#loads tbody tr'))"
        ".map(function (r) { return r.cells[0].textContent; });")


def _visible(driver) -> list[str]:
    return driver.execute_script(
        "return Array.from(document.querySelectorAll('#loads tbody tr'))"
        ".filter(function (r) { return !r.hidden && r.offsetParent !== null; })"
        ".map(function (r) { return r.cells[0].textContent; });")


def _open(driver, site):
    browser.console_errors(driver)  # drop entries of earlier pages
    driver.get(browser.file_url(site / "loads.html"))
    driver.find_element("css selector", "#h-p button")  # the script has run


def test_sort_numeric_both_ways_and_text(driver, site):
    from selenium.webdriver.common.by import By
    from selenium.webdriver.common.keys import Keys

    _open(driver, site)
    power = driver.find_element(By.CSS_SELECTOR, "#h-p button")
    assert driver.find_element(By.ID, "h-p").get_attribute("aria-sort") is None
    power.click()
    # ascending by data-value (W), the row without a value last
    assert _names(driver) == ["Pump 2", "Pump 10", "Mixer", "Compressor", "Furnace", "Lighting"]
    assert driver.find_element(By.ID, "h-p").get_attribute("aria-sort") == "ascending"
    power.click()
    assert _names(driver) == ["Furnace", "Compressor", "Mixer", "Pump 10", "Pump 2", "Lighting"]
    assert driver.find_element(By.ID, "h-p").get_attribute("aria-sort") == "descending"

    # text column, by keyboard: natural order puts "Pump 2" before "Pump 10"
    name_btn = driver.find_element(By.CSS_SELECTOR, "#h-name button")
    name_btn.send_keys(Keys.ENTER)
    assert _names(driver) == ["Compressor", "Furnace", "Lighting", "Mixer", "Pump 2", "Pump 10"]
    assert driver.find_element(By.ID, "h-name").get_attribute("aria-sort") == "ascending"
    assert driver.find_element(By.ID, "h-p").get_attribute("aria-sort") is None  # only one sorted column
    name_btn.send_keys(Keys.SPACE)
    assert _names(driver) == ["Pump 10", "Pump 2", "Mixer", "Lighting", "Furnace", "Compressor"]
    # the button keeps the header text as its accessible name; data-nosort header has no button
    assert name_btn.text.startswith("Load")
    assert driver.find_elements(By.CSS_SELECTOR, "#h-s button") == []
    assert browser.console_errors(driver) == []


def test_filter_by_text_and_status(driver, site):
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.ui import Select

    _open(driver, site)
    count = driver.find_element(By.ID, "count")
    assert count.text == "6 of 6 rows"
    q = driver.find_element(By.ID, "q")
    q.send_keys("PUMP")  # case-insensitive
    assert _visible(driver) == ["Pump 2", "Pump 10"]
    assert count.text == "2 of 6 rows"
    status = Select(driver.find_element(By.ID, "st"))
    status.select_by_value("warn")
    assert _visible(driver) == ["Pump 2"]
    q.clear()
    q.send_keys(" ")  # whitespace only: no text filter
    assert _visible(driver) == ["Pump 2", "Furnace"]
    status.select_by_value("warn fail")
    assert _visible(driver) == ["Compressor", "Pump 2", "Furnace"]
    q.send_keys("1,200")  # matches the displayed text of a cell
    assert _visible(driver) == ["Furnace"]
    q.send_keys("x")
    assert _visible(driver) == []
    assert driver.find_element(By.ID, "empty").is_displayed()
    q.clear()
    q.send_keys("mp")
    status.select_by_value("all")
    assert _visible(driver) == ["Compressor", "Pump 2", "Pump 10"]
    q.clear()
    # sorting keeps the filter
    status.select_by_value("pass")
    driver.find_element(By.CSS_SELECTOR, "#h-p button").click()
    assert _visible(driver) == ["Pump 10", "Mixer", "Lighting"]
    assert not driver.find_element(By.ID, "empty").is_displayed()
    assert browser.console_errors(driver) == []


def test_page_without_tables_has_no_errors(driver, tmp_path):
    shutil.copy(TABLE_JS, tmp_path / "table.js")
    (tmp_path / "plain.html").write_text(
        '<!doctype html><html><head><meta charset="utf-8"><title>t</title>'
        '<script src="table.js"></script></head><body><p>No tables here.</p>'
        '<input data-filter-for="nowhere"><select data-status-filter-for="p"><option>x</option></select>'
        '<p id="p">not a table</p></body></html>', encoding="utf-8")
    browser.console_errors(driver)
    driver.get(browser.file_url(tmp_path / "plain.html"))
    assert driver.execute_script("return typeof window.reportgenTables.init") == "function"
    driver.find_element("css selector", "input").send_keys("abc")
    assert browser.console_errors(driver) == []


def test_console_error_collection_works(driver, tmp_path):
    """Negative control: a page with a script error must show up as a console error."""
    (tmp_path / "bad.html").write_text(
        "<!doctype html><html><head><title>bad</title></head><body>"
        "<script>undefinedFunctionForTheTest();</script></body></html>", encoding="utf-8")
    browser.console_errors(driver)
    driver.get(browser.file_url(tmp_path / "bad.html"))
    errors = browser.console_errors(driver)
    assert any("undefinedFunctionForTheTest" in e for e in errors), errors
