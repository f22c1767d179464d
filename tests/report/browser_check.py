#!/usr/bin/env python3
"""Loads a rotorbench HTML report in a real headless browser (Debian's chromium) and checks it.

  browser_check.py --out DIR (--generator EXE | --html FILE [--figures IDS_FILE])

Talks to chromium over its DevTools pipe (--remote-debugging-pipe: NUL-separated JSON on
file descriptors 3 and 4), so it needs nothing but python3 and chromium. Checks:
  * the file is self-contained: no <script>, no http(s) references, no external src/href;
  * loading it makes no network request and logs no console error, exception or failed load;
  * every expected plot (<svg class="plot">, by id) is present and drawn with a real size;
  * a full-page PNG screenshot and an A4 print (PDF, the page size checked) are written to DIR.
A control page with a missing image and a console error is checked first: if the checker does
not see those errors, it cannot be trusted and the test fails.
Exit 0 = pass, 1 = fail, 77 = skipped (no chromium; a failure if ROTORBENCH_REQUIRE_BROWSER=1).
"""
import argparse
import base64
import json
import os
import re
import shutil
import subprocess
import sys
import tempfile
import time

FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--disable-extensions", "--hide-scrollbars", "--mute-audio", "--remote-debugging-pipe"]


class Browser:
    """A chromium process driven over the DevTools pipe."""

    def __init__(self, exe, profile):
        to_chrome_r, self.to_chrome = os.pipe()
        self.from_chrome, from_chrome_w = os.pipe()

        def child_fds():
            # Via fresh copies: a pipe end may already be fd 3 or 4 (and dup2 onto itself
            # would keep its close-on-exec flag).
            a, b = os.dup(to_chrome_r), os.dup(from_chrome_w)
            os.dup2(a, 3)
            os.dup2(b, 4)

        self.proc = subprocess.Popen([exe] + FLAGS + ["--user-data-dir=" + profile, "about:blank"],
                                     stdin=subprocess.DEVNULL, stdout=subprocess.DEVNULL,
                                     stderr=subprocess.DEVNULL, preexec_fn=child_fds,
                                     close_fds=False)
        os.close(to_chrome_r)
        os.close(from_chrome_w)
        self.buf = b""
        self.next_id = 0
        self.events = []

    def _read_message(self, deadline):
        while b"\0" not in self.buf:
            if time.time() > deadline:
                raise TimeoutError("no answer from chromium")
            chunk = os.read(self.from_chrome, 65536)
            if not chunk:
                raise RuntimeError("chromium closed the DevTools pipe (crashed?)")
            self.buf += chunk
        msg, self.buf = self.buf.split(b"\0", 1)
        return json.loads(msg)

    def call(self, method, params=None, session=None, timeout=60):
        self.next_id += 1
        msg = {"id": self.next_id, "method": method, "params": params or {}}
        if session:
            msg["sessionId"] = session
        os.write(self.to_chrome, json.dumps(msg).encode() + b"\0")
        deadline = time.time() + timeout
        while True:
            m = self._read_message(deadline)
            if m.get("id") == self.next_id:
                if "error" in m:
                    raise RuntimeError("%s: %s" % (method, m["error"]))
                return m.get("result", {})
            if "method" in m:
                self.events.append(m)

    def wait_event(self, method, timeout=60):
        deadline = time.time() + timeout
        for i, e in enumerate(self.events):
            if e["method"] == method:
                return self.events.pop(i)
        while True:
            m = self._read_message(deadline)
            if m.get("method") == method:
                return m
            if "method" in m:
                self.events.append(m)

    def drain(self, seconds):
        """Collects events for a while (late console messages)."""
        deadline = time.time() + seconds
        import select
        while True:
            left = deadline - time.time()
            if left <= 0:
                return
            r, _, _ = select.select([self.from_chrome], [], [], left)
            if not r and b"\0" not in self.buf:
                return
            m = self._read_message(time.time() + 5)
            if "method" in m:
                self.events.append(m)

    def close(self):
        try:
            self.call("Browser.close", timeout=10)
        except Exception:
            pass
        try:
            self.proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            self.proc.wait()


PLOT_PROBE = """JSON.stringify(Array.from(document.querySelectorAll('svg.plot')).map(s => {
  const r = s.getBoundingClientRect();
  return {id: s.id, w: r.width, h: r.height,
          marks: s.querySelectorAll('path,circle,rect').length,
          texts: s.querySelectorAll('text').length};
}))"""


def load(browser, url, shots_prefix=None):
    """Opens url in a fresh tab; returns (problems seen by the browser, plots, requests)."""
    target = browser.call("Target.createTarget", {"url": "about:blank"})["targetId"]
    session = browser.call("Target.attachToTarget", {"targetId": target, "flatten": True})["sessionId"]
    for domain in ("Page", "Runtime", "Log", "Network"):
        browser.call(domain + ".enable", session=session)
    browser.call("Emulation.setDeviceMetricsOverride",
                 {"width": 1100, "height": 1400, "deviceScaleFactor": 1, "mobile": False},
                 session=session)
    browser.events.clear()
    browser.call("Page.navigate", {"url": url}, session=session)
    browser.wait_event("Page.loadEventFired")
    browser.drain(0.5)
    problems, requests = [], []
    for e in browser.events:
        m, p = e["method"], e.get("params", {})
        if m == "Runtime.consoleAPICalled" and p.get("type") in ("error", "assert"):
            args = " ".join(str(a.get("value", a.get("description", ""))) for a in p.get("args", []))
            problems.append("console.%s: %s" % (p["type"], args))
        elif m == "Runtime.exceptionThrown":
            d = p["exceptionDetails"]
            problems.append("exception: %s %s" % (d.get("text", ""),
                                                  d.get("exception", {}).get("description", "")))
        elif m == "Log.entryAdded" and p["entry"].get("level") == "error":
            problems.append("log: %s %s" % (p["entry"].get("text", ""), p["entry"].get("url", "")))
        elif m == "Network.loadingFailed":
            problems.append("load failed: %s" % p.get("errorText", ""))
        elif m == "Network.requestWillBeSent":
            requests.append(p["request"]["url"])
    plots = json.loads(browser.call("Runtime.evaluate", {"expression": PLOT_PROBE,
                                                         "returnByValue": True},
                                    session=session)["result"]["value"])
    pdf_size = None
    if shots_prefix:
        metrics = browser.call("Page.getLayoutMetrics", session=session)
        size = metrics.get("cssContentSize") or metrics["contentSize"]
        shot = browser.call("Page.captureScreenshot",
                            {"format": "png", "captureBeyondViewport": True,
                             "clip": {"x": 0, "y": 0, "width": size["width"],
                                      "height": size["height"], "scale": 1}},
                            session=session, timeout=120)
        with open(shots_prefix + ".png", "wb") as f:
            f.write(base64.b64decode(shot["data"]))
        pdf = browser.call("Page.printToPDF", {"preferCSSPageSize": True, "printBackground": True},
                           session=session, timeout=120)
        data = base64.b64decode(pdf["data"])
        with open(shots_prefix + ".pdf", "wb") as f:
            f.write(data)
        pdf_size = data
    browser.call("Target.closeTarget", {"targetId": target})
    return problems, plots, requests, pdf_size


def static_problems(html):
    out = []
    if re.search(r"<script", html, re.I):
        out.append("contains a <script> (the report must read without scripts)")
    if re.search(r"https?://", html, re.I):
        out.append("refers to http(s) addresses: %s" % re.findall(r"https?://[^\s\"'<>]*", html)[:3])
    for m in re.finditer(r"""\s(?:src|href)\s*=\s*["']([^"']*)["']""", html, re.I):
        if not m.group(1).startswith("#"):
            out.append("external reference %s" % m.group(0).strip())
    if re.search(r"url\((?!#)", html):
        out.append("CSS url() outside the page")
    return out


def pdf_pages(data):
    """Page sizes (points) from the PDF's /MediaBox entries."""
    boxes = re.findall(rb"/MediaBox\s*\[\s*([\d.]+)\s+([\d.]+)\s+([\d.]+)\s+([\d.]+)\s*\]", data)
    return [(float(c) - float(a), float(d) - float(b)) for a, b, c, d in boxes]


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--out", required=True)
    ap.add_argument("--generator")
    ap.add_argument("--html")
    ap.add_argument("--figures")
    args = ap.parse_args()
    os.makedirs(args.out, exist_ok=True)
    exe = shutil.which("chromium") or shutil.which("chromium-browser")
    if not exe:
        msg = "browser check: chromium not found (apt-get install chromium)"
        if os.environ.get("ROTORBENCH_REQUIRE_BROWSER") == "1":
            print(msg + "; required here (ROTORBENCH_REQUIRE_BROWSER=1)")
            return 1
        print(msg + "; skipped")
        return 77

    html_path, figures_path = args.html, args.figures
    if args.generator:
        html_path = os.path.join(args.out, "sample-report.html")
        subprocess.run([args.generator, html_path], check=True)
        figures_path = html_path + ".figures"
    expected = []
    if figures_path:
        with open(figures_path) as f:
            expected = [line.strip() for line in f if line.strip()]
    with open(html_path, encoding="utf-8") as f:
        html = f.read()
    failures = ["%s: %s" % (html_path, p) for p in static_problems(html)]

    # The control: a page with a missing image, a console error and an exception.
    control = os.path.join(args.out, "control.html")
    with open(control, "w") as f:
        f.write("<!DOCTYPE html><html><head><meta charset='utf-8'><title>c</title></head><body>"
                "<img src='missing-image.png'><script>console.error('control error');"
                "undefined_function();</script></body></html>")
    profile = tempfile.mkdtemp(prefix="rb-chromium-")
    browser = Browser(exe, profile)
    try:
        browser.call("Browser.getVersion")
        c_problems, _, _, _ = load(browser, "file://" + os.path.abspath(control))
        seen = " | ".join(c_problems)
        if not ("control error" in seen and "undefined_function" in seen and
                ("missing-image" in seen or "ERR_FILE_NOT_FOUND" in seen)):
            failures.append("control page: the checker did not see its errors (saw: %s)" % seen)
        shots = os.path.join(args.out, os.path.splitext(os.path.basename(html_path))[0])
        problems, plots, requests, pdf = load(browser, "file://" + os.path.abspath(html_path),
                                              shots)
    finally:
        browser.close()
        shutil.rmtree(profile, ignore_errors=True)

    failures += ["console: " + p for p in problems]
    failures += ["network request: " + u for u in requests if not u.startswith(("file:", "data:"))]
    drawn = {p["id"]: p for p in plots}
    for fid in expected:
        p = drawn.get(fid)
        if not p:
            failures.append("plot %s is missing" % fid)
        elif p["w"] < 200 or p["h"] < 100 or p["marks"] < 5 or p["texts"] < 4:
            failures.append("plot %s is not drawn properly: %s" % (fid, p))
    if not plots:
        failures.append("no plots on the page")
    pages = pdf_pages(pdf or b"")
    a4 = (595.3, 841.9)  # 210 mm × 297 mm in points
    if not pages:
        failures.append("print: no pages in the PDF")
    elif any(abs(w - a4[0]) > 2 or abs(h - a4[1]) > 2 for w, h in pages):
        failures.append("print: pages are not A4: %s" % sorted(set(pages)))

    png = shots + ".png"
    print("browser check of %s: %d plots drawn (%d expected), %d print pages (A4), screenshot %s "
          "(%d bytes)" % (html_path, len(plots), len(expected), len(pages), png,
                          os.path.getsize(png) if os.path.exists(png) else 0))
    for f in failures:
        print("FAIL: " + f)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
