"""The browser view (womlab.view): the page, in a real browser.

Oracle: headless Chromium (Debian's ``chromium`` and its matching ``chromium-driver``,
driven through Selenium's WebDriver, the W3C WebDriver standard) loads the page from a
``womlab view`` server on this machine, with solara's CDN proxy and usage reporting off so
that nothing leaves it. What the browser shows is read back from its own DOM and from its
own screenshot: the status line Mesa's step advances, the adoption-curve image changing
after a step, and the network panel's pixels in the colours of the states. Skipped only
when Chromium, its driver or the view's extra is missing; CI installs them.

The fast checks (no browser) hold the page's pieces to what the model says (common
practice: a figure drawn from the model shows the model's own counts).
"""

from __future__ import annotations

import os
import shutil
import signal
import socket
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

import numpy as np
import pytest

pytest.importorskip("solara")
from matplotlib.colors import to_rgb  # noqa: E402

from womlab import load_scenario  # noqa: E402
from womlab.cli import main  # noqa: E402
from womlab.dynamics.mesa_model import ReferralModel  # noqa: E402
from womlab.view import view_page, view_scenario  # noqa: E402
from womlab.view.page import STATE_COLOURS, network_figure  # noqa: E402

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
DRIVER = shutil.which("chromedriver")

CONFIG = """# View test scenario: INVENTED for illustration.
name = "view test (invented)"
seed = 5

[market]
organisations = 150
initial_customers = 3

[network]
kind = "small_world"
mean_degree = 4
rewiring = 0.1

[adoption]
word_of_mouth = 0.5
satisfied_share = 0.8

[run]
periods = 20
"""


def test_a_large_market_is_scaled_down_for_the_view() -> None:
    s = view_scenario(load_scenario("demo"), 300)  # the invented demo: 12,000 firms, 120 initial customers
    assert s.market.organisations == 300 and s.n_initial == 3
    assert s.adoption == load_scenario("demo").adoption and s.network.kind == "regional"


def test_the_network_panel_colours_each_organisation_by_its_state() -> None:
    model = ReferralModel(
        organisations=120,
        initial_customers=4,
        kind="random",
        mean_degree=4,
        periods=10,
        word_of_mouth=0.8,
        satisfied_share=0.5,
    )
    for _ in range(5):
        model.step()
    fig = network_figure(model)
    nodes = fig.axes[0].collections[1]  # ties first, then the organisations
    colours = [tuple(np.round(c[:3], 3)) for c in nodes.get_facecolors()]
    count = {state: colours.count(tuple(np.round(to_rgb(c), 3))) for state, c in STATE_COLOURS.items()}
    result = model.result()
    assert count["satisfied customer"] == result.satisfied_customers[-1]
    assert count["customer, not satisfied"] == result.customers[-1] - result.satisfied_customers[-1]
    assert count["potential customer"] == 120 - result.customers[-1]


def test_the_page_is_built_for_any_shipped_demo() -> None:
    for name in ("demo", "seeding-demo"):
        assert type(view_page(load_scenario(name))).__name__ == "Element"


def test_view_of_a_missing_file_is_one_line_and_exit_2(capsys) -> None:
    assert main(["view", "no-such-scenario.toml"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("womlab: error: scenario file 'no-such-scenario.toml' does not exist")


def _free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def _wait_for(url: str, seconds: float) -> None:
    end = time.monotonic() + seconds
    while time.monotonic() < end:
        try:
            with urllib.request.urlopen(url, timeout=5) as response:
                if response.status == 200:
                    return
        except OSError:
            time.sleep(1)
    raise AssertionError(f"the view did not answer at {url} within {seconds:.0f} s")


def _share_of_pixels(image: np.ndarray, colour: str, tolerance: float = 0.06) -> float:
    return float((np.abs(image[:, :, :3] - np.array(to_rgb(colour))).max(axis=2) < tolerance).mean())


@pytest.mark.skipif(
    CHROMIUM is None or DRIVER is None, reason="chromium and chromium-driver are not installed (CI installs Debian's)"
)
def test_the_page_loads_a_step_advances_the_curve_and_the_network_shows(tmp_path) -> None:
    webdriver = pytest.importorskip("selenium.webdriver")
    from matplotlib.image import imread
    from selenium.webdriver.chrome.service import Service
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.ui import WebDriverWait

    config = tmp_path / "view.toml"
    config.write_text(CONFIG, encoding="utf-8")
    port = _free_port()
    env = {**os.environ, "SOLARA_ASSETS_CDN": "http://127.0.0.1:9/", "SOLARA_TELEMETRY_MIXPANEL_ENABLE": "false"}
    server = subprocess.Popen(
        [sys.executable, "-m", "womlab", "view", str(config), "--port", str(port)],
        env=env,
        stdout=subprocess.PIPE,
        stderr=subprocess.STDOUT,
        start_new_session=True,
    )
    options = webdriver.ChromeOptions()
    for flag in (
        "--headless=new",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-dev-shm-usage",
        "--window-size=1500,1100",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--no-first-run",
        f"--user-data-dir={tmp_path / 'profile'}",
    ):
        options.add_argument(flag)
    options.binary_location = CHROMIUM
    driver = None
    try:
        _wait_for(f"http://127.0.0.1:{port}/", 240)
        driver = webdriver.Chrome(options=options, service=Service(DRIVER))
        driver.set_page_load_timeout(120)
        driver.get(f"http://127.0.0.1:{port}/")
        wait = WebDriverWait(driver, 180, poll_frequency=0.5)
        wait.until(lambda d: "Period 0 of 20" in d.find_element(By.TAG_NAME, "body").text)
        body = driver.find_element(By.TAG_NAME, "body").text
        assert "3 customers of 150" in body
        for label in ("Word of mouth", "External influence", "Satisfied share", "Network kind"):
            assert label in body, f"no input labelled {label!r} on the page"

        def figures() -> list[str]:
            """The sources of the page's figure images: the network, then the curve."""
            found = [img.get_attribute("src") or "" for img in driver.find_elements(By.TAG_NAME, "img")]
            return [src for src in found if src.startswith(("data:image/png", "blob:"))]

        wait.until(lambda d: len(figures()) >= 2)
        before = figures()
        step = next(b for b in driver.find_elements(By.TAG_NAME, "button") if b.text.strip().lower() == "step")
        step.click()
        wait.until(lambda d: "Period 1 of 20" in d.find_element(By.TAG_NAME, "body").text)
        wait.until(lambda d: len(figures()) >= 2 and figures()[1] != before[1])
        after = figures()
        assert after[1] != before[1], "the curve image did not change after a step"

        # Mesa's reset rebuilds the model from the page's parameters (on Mesa 3.5 it also hands
        # back a Mesa scenario as `scenario=`): the same seeded model, at period 0 again
        reset = next(b for b in driver.find_elements(By.TAG_NAME, "button") if b.text.strip().lower() == "reset")
        reset.click()
        wait.until(lambda d: "Period 0 of 20" in d.find_element(By.TAG_NAME, "body").text)
        assert "3 customers of 150" in driver.find_element(By.TAG_NAME, "body").text
        step = next(b for b in driver.find_elements(By.TAG_NAME, "button") if b.text.strip().lower() == "step")
        step.click()
        wait.until(lambda d: "Period 1 of 20" in d.find_element(By.TAG_NAME, "body").text)

        shot = tmp_path / "view.png"
        assert driver.save_screenshot(str(shot))
        image = imread(shot)
        # the network panel: many organisations still potential customers, some satisfied customers
        assert _share_of_pixels(image, STATE_COLOURS["potential customer"]) > 0.002
        assert _share_of_pixels(image, STATE_COLOURS["satisfied customer"]) > 0.0002
        kept = os.environ.get("WOMLAB_VIEW_SCREENSHOT")
        if kept:  # to look at the page by eye
            shutil.copy(shot, kept)
    finally:
        if driver is not None:
            driver.quit()
        os.killpg(server.pid, signal.SIGTERM)  # the server and the solara process it started
        try:
            server.wait(timeout=30)
        except subprocess.TimeoutExpired:
            os.killpg(server.pid, signal.SIGKILL)
        log = server.stdout.read().decode(errors="replace") if server.stdout else ""
        Path(tmp_path / "server.log").write_text(log, encoding="utf-8")
