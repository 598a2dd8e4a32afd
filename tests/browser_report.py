#!/usr/bin/env python3
"""The select report in a real browser (issue 19, point 3).

Runs `knotpath select --report` on a small table written here, then renders
report.html with headless Chromium (Debian package `chromium`) and checks:
  - the page logs no console message (Chromium's --enable-logging=stderr
    prints each as a "CONSOLE" line); a probe page that logs one proves the
    check sees them in this Chromium;
  - its screenshot is not blank (the PNG decoded here with zlib; a blank
    probe page proves the count sees white as white);
  - the DOM Chromium built holds the numbers: the coefficients at both
    choices equal select's JSON to the 8 digits shown, the criteria table has
    one row per knot, the entry-test table one row per entry, and the caution
    about decisions affecting people is on the page.
Exit 77 (CTest SKIP_RETURN_CODE) with a message when Chromium is absent.

usage: browser_report.py KNOTPATH_PROGRAM
"""
import html.parser
import json
import os
import random
import shutil
import struct
import subprocess
import sys
import tempfile
import zlib

SKIP = 77
WIDTH, HEIGHT = 900, 1300


def fail(message):
    print("browser_report: FAIL: " + message, file=sys.stderr)
    sys.exit(1)


def find_browser():
    for name in ("chromium", "chromium-browser"):
        path = shutil.which(name)
        if path:
            return path
    return None


def write_table(path):
    """80 rows, 6 predictors, three of them with an effect (fixed seed)."""
    rng = random.Random(19)
    names = ["dose", "age", "weight", "site_a", "site_b", "hours"]
    with open(path, "w") as f:
        f.write(",".join(names + ["outcome"]) + "\n")
        for _ in range(80):
            x = [rng.gauss(0, 1) for _ in names]
            y = 3 * x[0] - 2 * x[1] + 0.8 * x[2] + rng.gauss(0, 1)
            f.write(",".join("%.6f" % v for v in x + [y]) + "\n")


def run_browser(browser, profile, url, extra):
    """Chromium headless on `url`; returns (stdout, stderr)."""
    command = [browser, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
               "--disable-dev-shm-usage", "--hide-scrollbars", "--user-data-dir=" + profile,
               "--window-size=%d,%d" % (WIDTH, HEIGHT)] + extra + [url]
    try:
        done = subprocess.run(command, capture_output=True, text=True, timeout=90)
    except subprocess.TimeoutExpired:
        fail("chromium did not finish within 90 s: " + " ".join(command))
    return done.stdout, done.stderr


def console_lines(log):
    return [line for line in log.splitlines() if "CONSOLE" in line]


def screenshot(browser, profile, url, png):
    _, log = run_browser(browser, profile, url,
                         ["--enable-logging=stderr", "--v=0", "--screenshot=" + png])
    if not os.path.exists(png):
        fail("chromium wrote no screenshot of %s; its log:\n%s" % (url, log))
    return log


def non_white_fraction(png_path):
    """Fraction of pixels that are not white, from the PNG's own bytes
    (8-bit RGB or RGBA, not interlaced: what Chromium writes)."""
    data = open(png_path, "rb").read()
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        fail(png_path + " is not a PNG")
    pos, idat = 8, b""
    width = height = channels = None
    while pos < len(data):
        length, kind = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + length]
        if kind == b"IHDR":
            width, height, depth, colour, _, _, interlace = struct.unpack(">IIBBBBB", body)
            if depth != 8 or interlace != 0 or colour not in (2, 6):
                fail("unexpected PNG layout (depth %d, colour %d, interlace %d)"
                     % (depth, colour, interlace))
            channels = 3 if colour == 2 else 4
        elif kind == b"IDAT":
            idat += body
        pos += 12 + length
    raw = zlib.decompress(idat)
    stride = width * channels
    previous = bytearray(stride)
    non_white = 0
    for row in range(height):
        start = row * (stride + 1)
        kind = raw[start]
        line = bytearray(raw[start + 1:start + 1 + stride])
        if kind == 1:
            for i in range(channels, stride):
                line[i] = (line[i] + line[i - channels]) & 255
        elif kind == 2:
            line = bytearray((a + b) & 255 for a, b in zip(line, previous))
        elif kind == 3:
            for i in range(stride):
                left = line[i - channels] if i >= channels else 0
                line[i] = (line[i] + ((left + previous[i]) >> 1)) & 255
        elif kind == 4:
            for i in range(stride):
                a = line[i - channels] if i >= channels else 0
                b = previous[i]
                c = previous[i - channels] if i >= channels else 0
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                pred = a if pa <= pb and pa <= pc else (b if pb <= pc else c)
                line[i] = (line[i] + pred) & 255
        for i in range(0, stride, channels):
            if line[i] < 245 or line[i + 1] < 245 or line[i + 2] < 245:
                non_white += 1
        previous = line
    return non_white / float(width * height)


class Tables(html.parser.HTMLParser):
    """Cells of every table with an id, and the page's text."""

    def __init__(self):
        super().__init__()
        self.tables, self.text = {}, []
        self._table = self._row = self._cell = None

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        if tag == "table" and attrs.get("id"):
            self._table = self.tables.setdefault(attrs["id"], [])
        elif tag == "tr" and self._table is not None:
            self._row = []
            self._table.append(self._row)
        elif tag in ("td", "th") and self._row is not None:
            self._cell = []

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None:
            self._row.append("".join(self._cell).strip())
            self._cell = None
        elif tag == "table":
            self._table = self._row = None

    def handle_data(self, data):
        self.text.append(data)
        if self._cell is not None:
            self._cell.append(data)


def close(shown, value):
    """A cell with 8 significant digits agrees with the JSON's number."""
    number = float(shown)
    return abs(number - value) <= 1e-7 * max(abs(value), 1e-300) or number == value


def main():
    if len(sys.argv) != 2:
        print(__doc__, file=sys.stderr)
        return 2
    program = os.path.abspath(sys.argv[1])
    browser = find_browser()
    if browser is None:
        print("browser_report: SKIP: no chromium on PATH (Debian package chromium; "
              "tools/install-deps.sh installs it)")
        return SKIP
    with tempfile.TemporaryDirectory(prefix="knotpath-browser-") as work:
        profile = os.path.join(work, "profile")
        # The probe: a white page that logs one console message.
        probe = os.path.join(work, "probe.html")
        with open(probe, "w") as f:
            f.write("<!DOCTYPE html><html><body style=\"background:#fff\">"
                    "<script>console.error('knotpath-probe')</script></body></html>")
        probe_png = os.path.join(work, "probe.png")
        log = screenshot(browser, profile, "file://" + probe, probe_png)
        if not any("knotpath-probe" in line for line in console_lines(log)):
            fail("this chromium does not report console messages on stderr; its log:\n" + log)
        blank = non_white_fraction(probe_png)
        if blank > 0.001:
            fail("the blank probe page counts %.4f non-white" % blank)

        table = os.path.join(work, "trial.csv")
        write_table(table)
        selection = os.path.join(work, "selection.json")
        report = os.path.join(work, "report")
        done = subprocess.run([program, "select", table, "--response", "outcome", "--folds", "5",
                               "--json", selection, "--report", report],
                              capture_output=True, text=True, timeout=120)
        if done.returncode != 0:
            fail("knotpath select failed (%d): %s" % (done.returncode, done.stderr))
        page = "file://" + os.path.join(report, "report.html")

        shot = os.path.join(work, "report.png")
        log = screenshot(browser, profile, page, shot)
        messages = console_lines(log)
        if messages:
            fail("the report logs console messages:\n" + "\n".join(messages))
        inked = non_white_fraction(shot)
        if inked < 0.02:
            fail("the report's screenshot is blank (%.4f of its pixels are not white)" % inked)

        dom, log = run_browser(browser, profile, page, ["--dump-dom"])
        parsed = Tables()
        parsed.feed(dom)
        doc = json.load(open(selection))
        cv = doc["cross_validation"]
        choices = parsed.tables.get("kp-choices")
        if not choices:
            fail("no coefficient table (id kp-choices) in the DOM")
        rows = {row[0]: row[1:] for row in choices[1:]}
        for column, key in ((0, "minimum"), (1, "parsimonious")):
            choice = cv[key]
            if not close(rows["(intercept)"][column], choice["intercept"]):
                fail("intercept at %s: page %s, JSON %r" % (key, rows["(intercept)"][column],
                                                            choice["intercept"]))
            for name, value in choice["coefficients"].items():
                if name not in rows or not close(rows[name][column], value):
                    fail("%s at %s: page %s, JSON %r" % (name, key, rows.get(name), value))
        criteria = parsed.tables.get("kp-criteria", [])
        if len(criteria) - 1 != len(doc["information_criteria"]["knots"]):
            fail("criteria table: %d rows for %d knots"
                 % (len(criteria) - 1, len(doc["information_criteria"]["knots"])))
        tests = parsed.tables.get("kp-entry-tests", [])
        if len(tests) - 1 != len(doc["significance"]["entries"]):
            fail("entry-test table: %d rows for %d entries"
                 % (len(tests) - 1, len(doc["significance"]["entries"])))
        text = " ".join("".join(parsed.text).split())
        for needle in ("least CV error (exact): ", "parsimonious (within 1 SE): ",
                       "decisions with consequences for people"):
            if needle not in text:
                fail("the page does not say " + repr(needle))
        print("browser_report: ok (%.3f of the screenshot inked; %d coefficient rows, %d knots, "
              "%d entries)" % (inked, len(rows), len(criteria) - 1, len(tests) - 1))
    return 0


if __name__ == "__main__":
    sys.exit(main())
