"""A real browser opens the report from disk: headless Chromium (Debian package ``chromium``) driven
over the Chrome DevTools protocol (websocket-client).  Every image must load, the console must stay
free of errors, no request may leave the file, and the verdict section must be on the first screen.

Chromium is required: this test fails (it is not skipped) when it is missing; CI installs it.
"""

from __future__ import annotations

import base64
import io
import json
import shutil
import subprocess
import time

import pytest
from typer.testing import CliRunner

from voiceband.cli.main import app

import websocket  # noqa: E402  (websocket-client, in the test extra)


def _chromium() -> str:
    exe = shutil.which("chromium") or shutil.which("chromium-browser")
    if exe is None:
        pytest.fail("chromium is not installed: install Debian's 'chromium' package (apt-get install -y chromium); "
                    "the browser test needs it")
    return exe


class _Page:
    def __init__(self, ws_url: str):
        self.ws = websocket.create_connection(ws_url, timeout=60, suppress_origin=True)
        self.next_id = 0
        self.events: list[dict] = []

    def call(self, method: str, **params):
        self.next_id += 1
        my = self.next_id
        self.ws.send(json.dumps({"id": my, "method": method, "params": params}))
        while True:
            msg = json.loads(self.ws.recv())
            if msg.get("id") == my:
                if "error" in msg:
                    raise RuntimeError(f"{method}: {msg['error']}")
                return msg.get("result", {})
            self.events.append(msg)

    def wait_for(self, method: str, timeout_s: float = 60.0) -> None:
        end = time.monotonic() + timeout_s
        while time.monotonic() < end:
            if any(e.get("method") == method for e in self.events):
                return
            self.events.append(json.loads(self.ws.recv()))
        raise TimeoutError(method)


@pytest.fixture(scope="module")
def report_index(tmp_path_factory):
    out = tmp_path_factory.mktemp("browser") / "report"
    res = CliRunner().invoke(app, ["report", "corpus_synthetic/speech_low_hum50.wav", "--out", str(out),
                                   "--before", "corpus_synthetic/speech_high_clipped.wav",
                                   "--title", "<img src=x onerror=alert(1)>"])
    assert res.exit_code == 0, res.output
    return out / "index.html"


@pytest.fixture(scope="module")
def browser(tmp_path_factory):
    exe = _chromium()
    profile = tmp_path_factory.mktemp("chromium-profile")
    proc = subprocess.Popen(
        [exe, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run", "--no-default-browser-check",
         "--disable-extensions", "--disable-background-networking", "--remote-debugging-port=0",
         f"--user-data-dir={profile}", "--window-size=1000,900", "about:blank"],
        stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        port_file = profile / "DevToolsActivePort"
        end = time.monotonic() + 60
        while not (port_file.exists() and port_file.read_text().strip()):
            if time.monotonic() > end or proc.poll() is not None:
                pytest.fail("chromium did not start its DevTools endpoint within 60 s")
            time.sleep(0.1)
        port = int(port_file.read_text().split()[0])
        import urllib.request

        targets = json.loads(urllib.request.urlopen(f"http://127.0.0.1:{port}/json/list", timeout=30).read())
        page = next(t for t in targets if t.get("type") == "page")
        yield _Page(page["webSocketDebuggerUrl"])
    finally:
        proc.terminate()
        try:
            proc.wait(10)
        except subprocess.TimeoutExpired:
            proc.kill()


def test_report_opens_offline_with_everything_loaded(browser, report_index):
    page = browser
    for domain in ("Page", "Network", "Runtime", "Log"):
        page.call(f"{domain}.enable")
    page.call("Emulation.setDeviceMetricsOverride", width=1000, height=900, deviceScaleFactor=1, mobile=False)
    url = report_index.resolve().as_uri()
    page.call("Page.navigate", url=url)
    page.wait_for("Page.loadEventFired")
    state = page.call("Runtime.evaluate", returnByValue=True, expression="""(() => {
        const imgs = Array.from(document.images);
        const v = document.getElementById('verdict');
        const r = v ? v.getBoundingClientRect() : null;
        const cs = v ? getComputedStyle(v) : null;
        return {images: imgs.length,
                loaded: imgs.filter(i => i.complete && i.naturalWidth > 0).length,
                verdict: r ? {top: r.top, height: r.height, display: cs.display, visibility: cs.visibility} : null,
                headline: (document.querySelector('#verdict .headline') || {}).textContent || '',
                title: document.title,
                scripts: document.scripts.length,
                h1: document.querySelector('h1').textContent};
    })()""")["result"]["value"]
    shot = page.call("Page.captureScreenshot", format="png")
    time.sleep(0.5)
    page.call("Runtime.evaluate", expression="1")  # drain late events
    ev = page.events

    # every image loaded
    assert state["images"] >= 6 and state["loaded"] == state["images"]
    # no request left the file: only the page itself and data: URLs
    urls = [e["params"]["request"]["url"] for e in ev if e.get("method") == "Network.requestWillBeSent"]
    assert urls and all(u == url or u.startswith("data:") for u in urls), urls
    assert not [e for e in ev if e.get("method") == "Network.loadingFailed"]
    # no console errors or exceptions
    errors = [e for e in ev if e.get("method") == "Runtime.exceptionThrown"
              or (e.get("method") == "Runtime.consoleAPICalled" and e["params"]["type"] == "error")
              or (e.get("method") == "Log.entryAdded" and e["params"]["entry"]["level"] == "error")]
    assert not errors, errors
    # the title is text, not markup
    assert state["title"] == "<img src=x onerror=alert(1)>" == state["h1"] and state["scripts"] == 0
    # the verdict section is visible on the first screen, and its headline says the verdict in words
    v = state["verdict"]
    assert v and v["display"] != "none" and v["visibility"] == "visible" and 0 <= v["top"] < 900 and v["height"] > 50
    assert any(word in state["headline"] for word in ("Pass", "Marginal", "Fail"))
    # ... and in the screenshot: the headline band is painted in a verdict colour, not the page's paper
    from matplotlib.image import imread

    img = imread(io.BytesIO(base64.b64decode(shot["data"])), format="png")
    assert img.shape[0] == 900 and img.shape[1] == 1000
    box = page.call("Runtime.evaluate", returnByValue=True, expression="""(() => {
        const r = document.querySelector('#verdict .headline').getBoundingClientRect();
        return [Math.round(r.left + 8), Math.round(r.top + r.height / 2), Math.round(r.right - 20)];
    })()""")["result"]["value"]
    x0, y, x1 = box
    assert 0 <= y < 900
    band = img[y, x0 + 40:x1, :3]
    paper = img[5, 5, :3]
    assert (abs(band - paper).sum(axis=-1) > 0.02).mean() > 0.5
