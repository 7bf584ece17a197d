"""Drives headless Chromium through WebDriver (selenium, chromedriver) for the browser tests.

    browser.py results PAGE.html
        Opens the page, waits until it sets `window.detentDone`, prints
        `window.detentResults` as JSON.

    browser.py replay PAGE.html finding|TRACEFILE
        Replays the first finding's counterexample, or pastes TRACEFILE into the trace
        box, and steps through it with the `n` key; prints what the page shows.

    browser.py live URL SPEC NEW_SPEC
        On a page served by `detent view`: two Steps, then NEW_SPEC is saved over SPEC;
        waits for the reload and prints the page's status and what it shows.

    browser.py click PAGE.html STEPS.json SCREENSHOT.png
        Opens a `detent view -o` page and plays each step of STEPS.json
        (`[{"event": "E", "inputs": {"a": true}}, ...]`) through its controls as a user
        does: picks the event in the event picker, sets each input's toggle, presses Step.
        After each step it reads what the page shows (the current state, the lamps that
        are lit, the actions of the step) and prints the list as JSON. Then it presses
        Back once and checks the page shows the state before the last step, and saves a
        screenshot.

The browser runs headless, without a sandbox (containers have none), with background
networking, sync and component updates off: the tests need no network and make none.
Errors go to stderr with exit status 1.
"""

import json
import shutil
import sys
import tempfile
from pathlib import Path

from selenium import webdriver
from selenium.webdriver.chrome.service import Service
from selenium.webdriver.common.by import By
from selenium.webdriver.support.ui import Select, WebDriverWait


def find(names):
    for n in names:
        p = shutil.which(n)
        if p:
            return p
    raise SystemExit(
        f"error: none of {', '.join(names)} is installed; run scripts/test.sh "
        "(it installs Debian's chromium and chromium-driver)"
    )


def browser(profile):
    opts = webdriver.ChromeOptions()
    opts.binary_location = find(["chromium", "chromium-browser"])
    for a in [
        "--headless=new",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-dev-shm-usage",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-default-apps",
        "--disable-sync",
        "--disable-extensions",
        "--no-first-run",
        "--no-default-browser-check",
        "--window-size=1400,1000",
        f"--user-data-dir={profile}",
    ]:
        opts.add_argument(a)
    service = Service(executable_path=find(["chromedriver"]))
    return webdriver.Chrome(service=service, options=opts)


def results(driver, page):
    driver.get(Path(page).resolve().as_uri())
    WebDriverWait(driver, 120).until(
        lambda d: d.execute_script("return window.detentDone === true")
    )
    print(json.dumps(driver.execute_script("return window.detentResults")))


def shown(driver):
    """What the page shows now: state, lit lamps, the actions of the last step."""
    state = driver.find_element(By.ID, "current-state").get_attribute("data-state")
    lamps = [
        e.get_attribute("data-output")
        for e in driver.find_elements(By.CSS_SELECTOR, "#lamps .lamp")
        if e.get_attribute("aria-checked") == "true"
    ]
    actions = [e.text for e in driver.find_elements(By.CSS_SELECTOR, "#last-actions li:not(.none)")]
    return {"state": state, "outputs": lamps, "actions": actions}


def marked_edges(driver):
    """The edges the diagram marks as the last step's, by state names: each edge's
    sources (one state, or every member of the group whose border it leaves) and
    target."""
    return driver.execute_script(
        """
        const svg = document.querySelector("#diagram svg");
        if (!svg) return [];
        const name = (i) => svg.querySelector(`.node[data-node="${i}"] text`).textContent;
        return [...svg.querySelectorAll("g.edge.last")].map((g) => ({
          from: g.dataset.from.split(" ").map(name),
          to: name(g.dataset.to),
        }));
        """
    )


def click(driver, page, steps_file, shot):
    driver.get(Path(page).resolve().as_uri())
    WebDriverWait(driver, 30).until(lambda d: d.find_element(By.ID, "step-button"))
    steps = json.loads(Path(steps_file).read_text())
    seen = [dict(shown(driver), marked=marked_edges(driver))]
    for s in steps:
        Select(driver.find_element(By.ID, "event-picker")).select_by_value(s["event"])
        wanted = s.get("inputs", {})
        for box in driver.find_elements(By.CSS_SELECTOR, "#input-toggles input"):
            if box.is_selected() != bool(wanted.get(box.get_attribute("name"), False)):
                box.click()
        driver.find_element(By.ID, "step-button").click()
        seen.append(dict(shown(driver), marked=marked_edges(driver)))
    if len(steps) > 0:
        driver.find_element(By.ID, "back-button").click()
        back = shown(driver)["state"]
        if back != seen[-2]["state"]:
            raise SystemExit(f"error: Back shows {back}, expected {seen[-2]['state']}")
        driver.find_element(By.ID, "step-button").click()
    driver.save_screenshot(shot)
    print(json.dumps(seen))


def replay(driver, page, source):
    """Replays a finding's counterexample (`source` = "finding") or the trace text of a
    file pasted into the trace box, one step per `n` key; prints what the page shows
    after each step, and how many diagram elements the first finding marks."""
    driver.get(Path(page).resolve().as_uri())
    WebDriverWait(driver, 30).until(lambda d: d.find_element(By.ID, "step-button"))
    first = driver.find_elements(By.CSS_SELECTOR, "#findings button[aria-pressed]")
    marked = 0
    if first:
        first[0].click()
        marked = len(driver.find_elements(By.CSS_SELECTOR, "#diagram .flagged"))
    if source == "finding":
        driver.find_element(By.XPATH, "//button[text()='Replay its counterexample']").click()
    else:
        box = driver.find_element(By.ID, "trace-text")
        box.clear()
        box.send_keys(Path(source).read_text())
        driver.find_element(By.ID, "trace-replay").click()
    err = driver.find_element(By.ID, "trace-error").text
    if err:
        raise SystemExit(f"error: the page refused the trace: {err}")
    seen = [shown(driver)]
    body = driver.find_element(By.TAG_NAME, "body")
    while driver.find_element(By.ID, "replay-next").is_enabled():
        body.send_keys("n")
        seen.append(shown(driver))
        if len(seen) > 1000:
            raise SystemExit("error: the replay does not end")
    status = driver.find_element(By.ID, "replay-status").text
    print(json.dumps({"steps": seen, "marked": marked, "status": status}))


def live(driver, url, spec, new_spec):
    """On a served page: two Steps (first event, no inputs), then saves NEW_SPEC over
    SPEC and waits for the page to reload; prints its status line and what it shows."""
    driver.get(url)
    WebDriverWait(driver, 30).until(lambda d: d.find_element(By.ID, "step-button"))
    body = driver.find_element(By.TAG_NAME, "body")
    body.send_keys("s")
    body.send_keys("s")
    before = shown(driver)
    Path(spec).write_text(Path(new_spec).read_text())
    WebDriverWait(driver, 30).until(
        lambda d: "reloaded" in d.find_element(By.ID, "live-status").text
    )
    status = driver.find_element(By.ID, "live-status").text
    title = driver.find_element(By.ID, "title").text
    print(json.dumps({"before": before, "after": shown(driver), "status": status, "title": title}))


def main(argv):
    if len(argv) < 3:
        raise SystemExit(__doc__)
    with tempfile.TemporaryDirectory(prefix="detent-chromium-") as profile:
        driver = browser(profile)
        try:
            if argv[1] == "results":
                results(driver, argv[2])
            elif argv[1] == "live" and len(argv) == 5:
                live(driver, argv[2], argv[3], argv[4])
            elif argv[1] == "replay" and len(argv) == 4:
                replay(driver, argv[2], argv[3])
            elif argv[1] == "click" and len(argv) == 5:
                click(driver, argv[2], argv[3], argv[4])
            else:
                raise SystemExit(__doc__)
        finally:
            driver.quit()


if __name__ == "__main__":
    main(sys.argv)
