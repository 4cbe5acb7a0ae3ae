"""The built site in headless Chromium (Debian chromium + chromedriver via selenium):
the index opens from file://, filters and sorts, every link resolves, no console errors."""

import shutil
from pathlib import Path
from urllib.parse import unquote, urlparse

import pytest

import browser
from reportgen.cli import main

DEMO = Path(__file__).resolve().parent.parent / "projects_demo"


@pytest.fixture(scope="module")
def site(tmp_path_factory):
    src = tmp_path_factory.mktemp("src")
    for p in sorted(DEMO.iterdir()):
        if p.is_dir():
            shutil.copytree(p, src / p.name)
        else:
            shutil.copy2(p, src / p.name)
    out = tmp_path_factory.mktemp("site")
    assert main(["build", str(src), "--out", str(out), "--quiet"]) == 0
    return out


@pytest.fixture(scope="module")
def driver():
    with browser.chrome() as d:
        yield d


def rows(driver):
    return driver.execute_script(
        "return Array.from(document.querySelectorAll('#projects tbody tr'))"
        ".filter(function (r) { return !r.hidden && r.offsetParent !== null; })"
        ".map(function (r) { return [r.cells[0].textContent.trim(), r.cells[5].getAttribute('data-value')]; });")


def test_index_filters_sorts_and_links(driver, site):
    from selenium.webdriver.common.by import By

    browser.console_errors(driver)
    driver.get(browser.file_url(site / "index.html"))
    all_rows = rows(driver)
    assert len(all_rows) == len([p for p in DEMO.iterdir() if (p / "project.yaml").is_file()])

    # sort by bank kvar, both ways
    bank = driver.find_elements(By.CSS_SELECTOR, "#projects thead th button")[5]
    bank.click()
    asc = [float(v) for _, v in rows(driver)]
    assert asc == sorted(asc)
    bank.click()
    desc = [float(v) for _, v in rows(driver)]
    assert desc == sorted(desc, reverse=True)

    # filter by text: one project's title
    title = all_rows[0][0]
    box = driver.find_element(By.CSS_SELECTOR, "input[data-filter-for=projects]")
    box.send_keys(title[:12])
    assert [r[0] for r in rows(driver)] == [t for t, _ in all_rows if title[:12].lower() in t.lower()]
    box.clear()
    box.send_keys("zzz-no-such-project")
    assert rows(driver) == []
    box.clear()
    box.send_keys(" ")
    box.clear()

    # follow every link: each resolves to a file of the build
    hrefs = driver.execute_script("return Array.from(document.querySelectorAll('a')).map(function (a) { return a.href; });")
    assert hrefs
    for href in hrefs:
        path = Path(unquote(urlparse(href).path))
        assert path.is_file(), href
        assert site in path.parents
    assert browser.console_errors(driver) == []


def test_every_project_page_has_working_links_and_no_errors(driver, site):
    for page in sorted(site.glob("*/index.html")):
        browser.console_errors(driver)
        driver.get(browser.file_url(page))
        hrefs = driver.execute_script(
            "return Array.from(document.querySelectorAll('a[href]')).map(function (a) { return a.href; });")
        for href in hrefs:
            u = urlparse(href)
            if u.scheme != "file":
                continue  # links the project author wrote in the summary (http/https/mailto)
            assert Path(unquote(u.path)).is_file(), (page, href)
        imgs = driver.execute_script(
            "return Array.from(document.images).map(function (i) { return [i.src, i.naturalWidth]; });")
        assert imgs and all(w > 0 for _, w in imgs), imgs  # every figure loads
        assert browser.console_errors(driver) == [], page
