"""--html: one self-contained page; rendering, sorting and filtering in a real headless
browser (Debian's chromium driven through its chromedriver by selenium)."""

from __future__ import annotations

import re
import shutil
import tempfile
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest
from inspect_meshes import planted_plate

from meshaudit import audit_mesh
from meshaudit.metrics import METRIC_NAMES
from meshaudit.outputs import html_report

CHROMIUM = Path("/usr/bin/chromium")
#: The planted plate's elements not ok, worst first (see inspect_meshes.planted_plate).
PLANTED = [7, 14, 24, 18]
CHROMEDRIVER = Path("/usr/bin/chromedriver")


class _Collect(HTMLParser):
    """Rows of the elements table and every URL-bearing attribute (stdlib parser)."""

    def __init__(self) -> None:
        super().__init__()
        self.row_ids: list[int] = []
        self.urls: list[str] = []
        self.tags: set[str] = set()

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.add(tag)
        if tag == "tr" and "data-id" in a:
            self.row_ids.append(int(a["data-id"]))
        for key in ("src", "href"):
            if key in a:
                self.urls.append(a[key])


@pytest.fixture(scope="module")
def plate_html(tmp_path_factory):
    audited = audit_mesh(planted_plate())
    path = tmp_path_factory.mktemp("html") / "report.html"
    path.write_text(html_report.render(audited.report, audited.elements), encoding="utf-8")
    return audited.report, path


def test_self_contained_and_lists_non_ok_elements(plate_html):
    report, path = plate_html
    text = path.read_text(encoding="utf-8")
    parsed = _Collect()
    parsed.feed(text)
    assert all(u.startswith("data:image/png;base64,") for u in parsed.urls)  # no network
    assert "link" not in parsed.tags and not re.search(r"https?://(?!www\.w3\.org/2000/svg)", text)
    # 18: the unit square under the flat triangle 24 (area 1/8): a size jump of
    # sqrt(8) = 2.83 between neighbours, past the standard warn limit 2 (closed form)
    assert parsed.row_ids == report.ids[report.worst()].tolist() == PLANTED
    assert text.count('role="img" aria-label="histogram of') == sum(
        1 for m in METRIC_NAMES if np.isfinite(report.metrics[m]).any()
    )


def _browser_skip_reason() -> str | None:
    if not (CHROMIUM.exists() and CHROMEDRIVER.exists()):
        return "chromium/chromedriver not installed (apt-get install chromium chromium-driver)"
    try:
        import selenium  # noqa: F401
    except ImportError:
        return "selenium not installed (pip install -e '.[test]')"
    return None


@pytest.fixture(scope="module")
def browser():
    reason = _browser_skip_reason()
    if reason:
        pytest.skip(reason)
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    profile = tempfile.mkdtemp(prefix="meshaudit-chromium-")
    options = webdriver.ChromeOptions()
    options.binary_location = str(CHROMIUM)
    for flag in (
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--no-first-run",
        "--disable-dev-shm-usage",
        f"--user-data-dir={profile}",
        "--window-size=1400,1800",
    ):
        options.add_argument(flag)
    driver = webdriver.Chrome(service=Service(str(CHROMEDRIVER)), options=options)
    try:
        yield driver
    finally:
        driver.quit()
        shutil.rmtree(profile, ignore_errors=True)


def _visible_ids(driver) -> list[int]:
    rows = driver.find_elements("css selector", "#elements tbody tr")
    return [int(r.get_attribute("data-id")) for r in rows if r.is_displayed()]


def test_renders_sorts_and_filters_in_a_browser(browser, tmp_path):
    audited = audit_mesh(planted_plate())
    report = audited.report
    page = tmp_path / "report.html"
    page.write_text(html_report.render(report, audited.elements), encoding="utf-8")
    browser.get(page.as_uri())
    browser.save_screenshot(str(tmp_path / "report.png"))  # kept in pytest's tmp dir
    assert (tmp_path / "report.png").read_bytes().startswith(b"\x89PNG")

    # rendering: the plot image decoded, the verdict shown, one row per non-ok element
    plot = browser.find_element("id", "plot")
    assert browser.execute_script("return arguments[0].naturalWidth", plot) > 800
    assert browser.find_element("id", "verdict").text == "FAIL"
    assert _visible_ids(browser) == PLANTED
    assert browser.find_element("id", "shown").text == "4"

    heads = browser.find_elements("css selector", "#elements thead th")
    names = [h.text.strip(" ▲▼") for h in heads]
    # sorting: aspect_ratio ascending then descending, compared with the report's values
    col = heads[names.index("aspect_ratio")]
    listed = report.worst()
    values = report.metrics["aspect_ratio"][listed]
    col.click()
    assert col.get_attribute("aria-sort") == "ascending"
    assert _visible_ids(browser) == report.ids[listed[np.argsort(values, kind="stable")]].tolist()
    col.click()
    assert col.get_attribute("aria-sort") == "descending"
    assert _visible_ids(browser) == report.ids[listed[np.argsort(-values, kind="stable")]].tolist()
    heads[names.index("id")].click()
    assert _visible_ids(browser) == sorted(PLANTED)

    # filtering by words and by verdict
    box = browser.find_element("id", "filter")
    box.send_keys("inverted")
    expected = [
        int(i) for i in report.ids[listed] if report.flag("inverted")[report.position_of(i)]
    ]
    assert _visible_ids(browser) == expected == [7, 14]
    box.send_keys(" self_intersecting")
    assert _visible_ids(browser) == [14]
    assert browser.find_element("id", "shown").text == "1"
    box.clear()
    box.send_keys(" ")  # an input event with no terms
    from selenium.webdriver.support.ui import Select

    Select(browser.find_element("id", "verdict-filter")).select_by_value("warn")
    assert _visible_ids(browser) == [18, 24]
    browser.save_screenshot(str(tmp_path / "report-filtered.png"))


def test_histograms_account_for_every_finite_value(plate_html):
    report, path = plate_html
    text = path.read_text(encoding="utf-8")
    for name in METRIC_NAMES:
        values = report.metrics[name]
        finite = values[np.isfinite(values)]
        if finite.size == 0:
            continue
        fig = re.search(rf'<figure data-metric="{name}">(.*?)</figure>', text).group(1)
        drawn = sum(int(c) for c in re.findall(r"<title>[^<]*: (\d+)</title></rect>", fig))
        # every value is drawn: in a bin, or in an overflow bar at an end (infinities too)
        assert drawn == int((~np.isnan(values)).sum()), name
        if (finite < 0).any():  # inverted elements' negative values are never cut off
            assert "below" not in fig.split("<figcaption>")[1], name


def test_findings_section_when_the_report_has_findings():
    from types import SimpleNamespace

    from meshaudit import explain

    audited = audit_mesh(planted_plate())
    finding = SimpleNamespace(
        kind="duplicate_elements",
        severity="fail",
        count=1,
        message="elements 3 and 4 <share> nodes",
        element_ids=np.array([3, 4]),
    )
    audited.report.findings = [finding]
    text = html_report.render(audited.report, audited.elements)
    assert '<table class="elements" id="findings">' in text
    assert "duplicate_elements" in text and "&lt;share&gt;" in text  # escaped
    assert explain(audited, 4).findings == [
        "duplicate_elements (fail): elements 3 and 4 <share> nodes"
    ]
    assert explain(audited, 5).findings == []
