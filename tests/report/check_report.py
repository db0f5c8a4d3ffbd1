#!/usr/bin/env python3
"""Loads stoik's HTML reports in a headless browser (Debian's chromium) and checks them.

Usage:
    python3 tests/report/check_report.py BINARY [--chromium PATH] [--keep-docs]

For each of the four reports (`stoik run`, `rates`, `flux` and `sensitivity` on the bundled
hydrogen-oxygen demo, written into a temporary folder) the script drives chromium through its DevTools
protocol (a WebSocket client written here with the Python standard library only) and
checks that:
  - the page loads with no console error, no uncaught exception and no browser log entry
    of level error (a failed resource load is one);
  - the page asks for nothing outside itself (every request is the file itself or a data:
    URL);
  - the page shows its figures (the number of inline <svg> elements expected) and has no
    horizontal scroll bar at 1366 x 900 px (a laptop screen);
  - a screenshot at 1366 x 900 px is not blank: decoded here (PNG, zlib), its pixels' grey
    levels have a standard deviation above 10 and more than 2 % of them are not white.

Before that, the checker checks itself on two pages of its own: one with a console error,
an uncaught exception and an external image must give findings, and a blank page must
fail the screenshot test; otherwise the checks above could not fail.

With --keep-docs the run report and its screenshot are kept as docs/example-report.html and
docs/report-screenshot.png, the sensitivity report and its screenshot as
docs/example-sensitivity-report.html and docs/sensitivity-report-screenshot.png. Exit status 0: every check passed; 1: a finding; 2: the browser
could not be started or driven.
"""

from __future__ import annotations

import argparse
import base64
import json
import os
import shutil
import socket
import struct
import subprocess
import sys
import tempfile
import threading
import time
import urllib.request
import zlib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
# Run from a copy of the bundled files, named relatively, so that the pages (and the example
# kept in docs/) name no folder of this machine.
SCENARIO = "mechanisms/hydrogen-oxygen.scenario.toml"
WIDTH, HEIGHT = 1366, 900


class WebSocket:
    """A minimal WebSocket client (RFC 6455): text frames, masked sends, no extensions."""

    def __init__(self, url: str):
        assert url.startswith("ws://"), url
        host_port, _, path = url[len("ws://"):].partition("/")
        host, _, port = host_port.partition(":")
        self.sock = socket.create_connection((host, int(port)), timeout=30)
        key = base64.b64encode(os.urandom(16)).decode()
        request = (f"GET /{path} HTTP/1.1\r\nHost: {host_port}\r\nUpgrade: websocket\r\n"
                   f"Connection: Upgrade\r\nSec-WebSocket-Key: {key}\r\nSec-WebSocket-Version: 13\r\n\r\n")
        self.sock.sendall(request.encode())
        response = b""
        while b"\r\n\r\n" not in response:
            chunk = self.sock.recv(4096)
            if not chunk:
                raise ConnectionError("WebSocket handshake: connection closed")
            response += chunk
        head, _, self.buffer = response.partition(b"\r\n\r\n")
        if b" 101 " not in head.split(b"\r\n")[0]:
            raise ConnectionError(f"WebSocket handshake refused: {head[:200]!r}")

    def send(self, text: str) -> None:
        payload = text.encode()
        header = bytearray([0x81])
        n = len(payload)
        if n < 126:
            header.append(0x80 | n)
        elif n < 1 << 16:
            header.append(0x80 | 126)
            header += struct.pack(">H", n)
        else:
            header.append(0x80 | 127)
            header += struct.pack(">Q", n)
        mask = os.urandom(4)
        header += mask
        self.sock.sendall(bytes(header) + bytes(b ^ mask[i % 4] for i, b in enumerate(payload)))

    def _read(self, n: int) -> bytes:
        while len(self.buffer) < n:
            chunk = self.sock.recv(1 << 16)
            if not chunk:
                raise ConnectionError("WebSocket closed")
            self.buffer += chunk
        out, self.buffer = self.buffer[:n], self.buffer[n:]
        return out

    def receive(self) -> str:
        message = b""
        while True:
            b0, b1 = self._read(2)
            opcode, n = b0 & 0x0F, b1 & 0x7F
            if n == 126:
                n = struct.unpack(">H", self._read(2))[0]
            elif n == 127:
                n = struct.unpack(">Q", self._read(8))[0]
            mask = self._read(4) if b1 & 0x80 else None
            data = self._read(n)
            if mask:
                data = bytes(b ^ mask[i % 4] for i, b in enumerate(data))
            if opcode == 8:
                raise ConnectionError("WebSocket closed by the browser")
            if opcode in (9, 10):
                continue
            message += data
            if b0 & 0x80:
                return message.decode()


class Page:
    """One browser tab driven through the DevTools protocol; records every event."""

    def __init__(self, ws_url: str):
        self.ws = WebSocket(ws_url)
        self.next_id = 0
        self.events: list[dict] = []

    def call(self, method: str, **params):
        self.next_id += 1
        ident = self.next_id
        self.ws.send(json.dumps({"id": ident, "method": method, "params": params}))
        while True:
            message = json.loads(self.ws.receive())
            if message.get("id") == ident:
                if "error" in message:
                    raise RuntimeError(f"{method}: {message['error']}")
                return message.get("result", {})
            if "method" in message:
                self.events.append(message)

    def wait_for(self, method: str, timeout_s: float) -> None:
        deadline = time.time() + timeout_s
        self.ws.sock.settimeout(timeout_s)
        while time.time() < deadline:
            if any(e["method"] == method for e in self.events):
                return
            message = json.loads(self.ws.receive())
            if "method" in message:
                self.events.append(message)
        raise TimeoutError(f"no {method} within {timeout_s} s")

    def drain(self, seconds: float) -> None:
        """Records the events that arrive during `seconds`."""
        end = time.time() + seconds
        while True:
            left = end - time.time()
            if left <= 0:
                return
            self.ws.sock.settimeout(left)
            try:
                message = json.loads(self.ws.receive())
            except (socket.timeout, TimeoutError):
                return
            if "method" in message:
                self.events.append(message)


class Browser:
    def __init__(self, chromium: str, profile: str):
        self.process = subprocess.Popen(
            [chromium, "--headless=new", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage", "--no-first-run",
             "--no-default-browser-check", "--remote-debugging-port=0", "--remote-debugging-address=127.0.0.1",
             f"--user-data-dir={profile}", f"--window-size={WIDTH},{HEIGHT}", "--hide-scrollbars",
             "about:blank"],
            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
        self.port = None
        deadline = time.time() + 60
        assert self.process.stderr is not None
        while time.time() < deadline:
            line = self.process.stderr.readline()
            if not line:
                break
            if "DevTools listening on ws://" in line:
                self.port = int(line.split("ws://", 1)[1].split("/", 1)[0].rsplit(":", 1)[1])
                break
        if self.port is None:
            self.close()
            raise RuntimeError("chromium did not start its DevTools endpoint")
        # Keep reading chromium's log so that a full pipe never blocks the browser.
        threading.Thread(target=self.process.stderr.read, daemon=True).start()

    def new_page(self) -> Page:
        request = urllib.request.Request(f"http://127.0.0.1:{self.port}/json/new?about:blank", method="PUT")
        with urllib.request.urlopen(request, timeout=30) as response:
            target = json.loads(response.read())
        return Page(target["webSocketDebuggerUrl"])

    def close(self) -> None:
        self.process.terminate()
        try:
            self.process.wait(timeout=10)
        except subprocess.TimeoutExpired:
            self.process.kill()


def load(browser: Browser, path: Path) -> tuple[Page, dict]:
    """Opens `path` in a fresh tab at 1366 x 900; returns the tab and facts about the page."""
    page = browser.new_page()
    for domain in ("Page", "Runtime", "Log", "Network"):
        page.call(f"{domain}.enable")
    page.call("Emulation.setDeviceMetricsOverride", width=WIDTH, height=HEIGHT, deviceScaleFactor=1, mobile=False)
    page.call("Page.navigate", url=path.resolve().as_uri())
    page.wait_for("Page.loadEventFired", 60)
    page.drain(1.0)
    facts = page.call("Runtime.evaluate", returnByValue=True, expression="""({
        svgs: document.querySelectorAll('svg').length,
        sections: document.querySelectorAll('section').length,
        scrollWidth: document.documentElement.scrollWidth,
        innerWidth: window.innerWidth,
        title: document.title})""")["result"]["value"]
    return page, facts


def problems(page: Page) -> list[str]:
    """Console errors, exceptions, error log entries and requests leaving the file."""
    found = []
    for e in page.events:
        p = e.get("params", {})
        if e["method"] == "Runtime.consoleAPICalled" and p.get("type") in ("error", "assert"):
            found.append("console error: " + " ".join(str(a.get("value", a.get("description", ""))) for a in p.get("args", [])))
        elif e["method"] == "Runtime.exceptionThrown":
            found.append("uncaught exception: " + p.get("exceptionDetails", {}).get("text", ""))
        elif e["method"] == "Log.entryAdded" and p.get("entry", {}).get("level") == "error":
            found.append("browser log error: " + p["entry"].get("text", ""))
        elif e["method"] == "Network.requestWillBeSent":
            url = p.get("request", {}).get("url", "")
            if not url.startswith(("file:", "data:", "about:")):
                found.append(f"request outside the page: {url}")
    return found


def screenshot(page: Page) -> bytes:
    data = page.call("Page.captureScreenshot", format="png",
                     clip={"x": 0, "y": 0, "width": WIDTH, "height": HEIGHT, "scale": 1})["data"]
    return base64.b64decode(data)


def grey_levels(png: bytes) -> tuple[int, int, list[int]]:
    """Width, height and the grey level (0-255) of every pixel of an 8-bit RGB/RGBA PNG
    (PNG specification, ISO/IEC 15948: chunks, zlib stream, per-row filters 0-4)."""
    assert png[:8] == b"\x89PNG\r\n\x1a\n", "not a PNG"
    pos, idat = 8, b""
    width = height = 0
    channels = 0
    while pos < len(png):
        (length,) = struct.unpack(">I", png[pos:pos + 4])
        kind = png[pos + 4:pos + 8]
        body = png[pos + 8:pos + 8 + length]
        if kind == b"IHDR":
            width, height, depth, color = struct.unpack(">IIBB", body[:10])
            assert depth == 8 and color in (2, 6), f"PNG depth {depth} colour type {color}"
            channels = 3 if color == 2 else 4
        elif kind == b"IDAT":
            idat += body
        pos += 12 + length
    raw = zlib.decompress(idat)
    stride = width * channels
    previous = bytearray(stride)
    levels = []
    for y in range(height):
        start = y * (stride + 1)
        kind, row = raw[start], bytearray(raw[start + 1:start + 1 + stride])
        for i in range(stride):
            a = row[i - channels] if i >= channels else 0
            b = previous[i]
            c = previous[i - channels] if i >= channels else 0
            if kind == 1:
                row[i] = (row[i] + a) & 0xFF
            elif kind == 2:
                row[i] = (row[i] + b) & 0xFF
            elif kind == 3:
                row[i] = (row[i] + (a + b) // 2) & 0xFF
            elif kind == 4:
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                row[i] = (row[i] + (a if pa <= pb and pa <= pc else b if pb <= pc else c)) & 0xFF
        levels.extend((row[i] * 299 + row[i + 1] * 587 + row[i + 2] * 114) // 1000
                      for i in range(0, stride, channels))
        previous = row
    return width, height, levels


def blank_reasons(png: bytes) -> list[str]:
    width, height, levels = grey_levels(png)
    reasons = []
    if (width, height) != (WIDTH, HEIGHT):
        reasons.append(f"screenshot is {width} x {height}, not {WIDTH} x {HEIGHT}")
    mean = sum(levels) / len(levels)
    sd = (sum((v - mean) ** 2 for v in levels) / len(levels)) ** 0.5
    inked = sum(1 for v in levels if v < 245) / len(levels)
    if sd <= 10:
        reasons.append(f"screenshot nearly uniform (grey-level standard deviation {sd:.1f})")
    if inked <= 0.02:
        reasons.append(f"screenshot nearly blank ({100 * inked:.2f} % of pixels not white)")
    return reasons


def self_check(browser: Browser, tmp: Path) -> list[str]:
    """The checks must see a bad page and a blank one."""
    bad = tmp / "bad.html"
    bad.write_text("<!DOCTYPE html><html><body><p>x</p><img src=\"http://192.0.2.1/x.png\">"
                   "<script>console.error('planted error'); undefinedFunction();</script></body></html>")
    page, _ = load(browser, bad)
    found = problems(page)
    failures = []
    for expected in ("console error", "uncaught exception", "request outside the page"):
        if not any(f.startswith(expected) for f in found):
            failures.append(f"self-check: the planted {expected} was not seen ({found})")
    blank = tmp / "blank.html"
    blank.write_text("<!DOCTYPE html><html><body></body></html>")
    page, _ = load(browser, blank)
    if not blank_reasons(screenshot(page)):
        failures.append("self-check: a blank page passed the screenshot test")
    return failures


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("binary")
    parser.add_argument("--chromium", default=os.environ.get("CHROMIUM")
                        or shutil.which("chromium") or shutil.which("chromium-browser") or "chromium")
    parser.add_argument("--keep-docs", action="store_true")
    args = parser.parse_args()
    binary = str(Path(args.binary).resolve())
    tmp = Path(tempfile.mkdtemp(prefix="stoik-report-check-"))
    shutil.copytree(ROOT / "mechanisms", tmp / "mechanisms")
    reports = {
        # The concentrations and the temperature, the sensitivity chart (ignition delay), three
        # rates-of-production charts, the H flux graph; Profiles, Sensitivities, three rates
        # sections, Flux graph, Edges, Run summary.
        "run": (["run", SCENARIO, "-o", "h2.csv", "--report", "run.html"], 7, 8),
        "run-plain": (["run", SCENARIO, "-o", "h2p.csv", "--report-without-analyses",
                       "--report", "run-plain.html"], 2, 2),
        "rates": (["rates", SCENARIO, "--species", "OH,H2O", "--times", "2.2e-4", "--top", "4",
                   "--report", "rates.html"], 2, 3),
        "flux": (["flux", SCENARIO, "--element", "H", "--time", "2.2e-4", "--report", "flux.html"], 1, 3),
        # The bar chart, the concentrations and the temperature; Sensitivities, Profiles of the
        # run, Summary.
        "sensitivity": (["sensitivity", SCENARIO, "--of", "ignition-delay", "--top", "6",
                         "--report", "sensitivity.html"], 3, 3),
    }
    for name, (argv, _, _) in reports.items():
        done = subprocess.run([binary, *argv], cwd=tmp, capture_output=True, text=True)
        if done.returncode != 0:
            print(f"FAIL: stoik {name} exited {done.returncode}: {done.stderr}")
            return 1
    try:
        browser = Browser(args.chromium, str(tmp / "profile"))
    except (OSError, RuntimeError) as e:
        print(f"ERROR: cannot start {args.chromium}: {e}")
        return 2
    failures: list[str] = []
    try:
        failures += self_check(browser, tmp)
        for name, (argv, svgs, sections) in reports.items():
            path = tmp / argv[-1]
            page, facts = load(browser, path)
            failures += [f"{name}: {p}" for p in problems(page)]
            if facts["svgs"] != svgs:
                failures.append(f"{name}: {facts['svgs']} figures shown, expected {svgs}")
            if facts["sections"] != sections:
                failures.append(f"{name}: {facts['sections']} sections, expected {sections}")
            if facts["scrollWidth"] > facts["innerWidth"]:
                failures.append(f"{name}: wider than the screen ({facts['scrollWidth']} px > {facts['innerWidth']} px)")
            png = screenshot(page)
            failures += [f"{name}: {r}" for r in blank_reasons(png)]
            print(f"{name}: {facts['svgs']} figures, {facts['sections']} sections, title {facts['title']!r}, "
                  f"{len(page.events)} browser events")
            kept = {"run": ("report-screenshot.png", "example-report.html"),
                    "sensitivity": ("sensitivity-report-screenshot.png", "example-sensitivity-report.html")}
            if args.keep_docs and name in kept:
                (ROOT / "docs" / kept[name][0]).write_bytes(png)
                shutil.copyfile(path, ROOT / "docs" / kept[name][1])
    except (OSError, RuntimeError, ConnectionError, TimeoutError) as e:
        print(f"ERROR: driving the browser failed: {e}")
        return 2
    finally:
        browser.close()
    for f in failures:
        print(f"FAIL: {f}")
    if failures:
        return 1
    shutil.rmtree(tmp, ignore_errors=True)
    print("report check: every page loaded without errors and shows its figures")
    return 0


if __name__ == "__main__":
    sys.exit(main())
