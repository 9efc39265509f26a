# SPDX-License-Identifier: MIT
# Checks what headless Chromium made of a report page (tests/report/browser_test.sh):
#   check_in_browser.py DOM.html LAYOUT.html CONSOLE.log SCREENSHOT.png PLOT-ID...
# DOM.html      the page's DOM after loading (--dump-dom of the report)
# LAYOUT.html   the DOM of a copy with a measuring script appended, whose
#               <pre id="st-layout"> holds "id width height" per <svg class="plot">
# CONSOLE.log   Chromium's stderr with --enable-logging=stderr --v=0
# SCREENSHOT    the rendered page (PNG, decoded here with zlib: RGB or RGBA, 8 bit)
# Fails (exit 1, one line per problem) on a blank page, any console message (the
# page has no scripts, so any message is an error of the page), a missing plot
# or a plot the browser laid out with no area.
import re
import struct
import sys
import zlib
from html.parser import HTMLParser

# A page counts as blank when less than this share of its pixels differ from its
# most frequent colour (the background); a rendered report covers several
# percent with text, lines and fills (common practice for screenshot smoke tests).
MIN_INK_SHARE = 0.01


class Elements(HTMLParser):
    def __init__(self):
        super().__init__()
        self.svg_ids = {}          # id -> number of drawing elements inside
        self.missing = []          # texts of <p class="missing">
        self.stack = []
        self.current_svg = None
        self.in_missing = False
        self.text = ""

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "svg" and "plot" in (a.get("class") or "").split():
            self.current_svg = a.get("id", "")
            self.svg_ids[self.current_svg] = 0
        elif self.current_svg is not None and tag in ("path", "polyline", "polygon", "line", "rect", "circle", "ellipse"):
            self.svg_ids[self.current_svg] += 1
        if tag == "p" and "missing" in (a.get("class") or "").split():
            self.in_missing, self.text = True, ""

    def handle_endtag(self, tag):
        if tag == "svg":
            self.current_svg = None
        if tag == "p" and self.in_missing:
            self.missing.append(self.text.strip())
            self.in_missing = False

    def handle_data(self, data):
        if self.in_missing:
            self.text += data


def png_ink_share(path):
    with open(path, "rb") as f:
        data = f.read()
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        raise ValueError("not a PNG file")
    pos, idat, width = 8, b"", 0
    while pos < len(data):
        length, kind = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + length]
        if kind == b"IHDR":
            width, height, depth, color = struct.unpack(">IIBB", body[:10])
            if depth != 8 or color not in (2, 6):
                raise ValueError(f"unsupported PNG (bit depth {depth}, colour type {color})")
            channels = 3 if color == 2 else 4
        elif kind == b"IDAT":
            idat += body
        pos += 12 + length
    raw = zlib.decompress(idat)
    stride = width * channels
    previous = bytearray(stride)
    counts = {}
    for row in range(height):
        start = row * (stride + 1)
        kind = raw[start]
        line = bytearray(raw[start + 1:start + 1 + stride])
        for i in range(stride):  # PNG filters (PNG specification, section 9)
            left = line[i - channels] if i >= channels else 0
            up = previous[i]
            upleft = previous[i - channels] if i >= channels else 0
            if kind == 1:
                line[i] = (line[i] + left) & 255
            elif kind == 2:
                line[i] = (line[i] + up) & 255
            elif kind == 3:
                line[i] = (line[i] + ((left + up) >> 1)) & 255
            elif kind == 4:
                p = left + up - upleft
                pa, pb, pc = abs(p - left), abs(p - up), abs(p - upleft)
                pred = left if pa <= pb and pa <= pc else (up if pb <= pc else upleft)
                line[i] = (line[i] + pred) & 255
        previous = line
        for x in range(0, stride, channels * 2):  # every second pixel is enough
            pixel = bytes(line[x:x + 3])
            counts[pixel] = counts.get(pixel, 0) + 1
    total = sum(counts.values())
    return 1.0 - max(counts.values()) / total if total else 0.0


def main():
    dom_path, layout_path, console_path, png_path, *plots = sys.argv[1:]
    problems = []
    with open(dom_path, encoding="utf-8") as f:
        dom = f.read()
    if "<parsererror" in dom:
        problems.append("the browser reported a parse error in the page")
    elements = Elements()
    elements.feed(dom)
    for plot in plots:
        if plot not in elements.svg_ids:
            problems.append(f"plot '{plot}' is missing")
        elif elements.svg_ids[plot] < 3:
            problems.append(f"plot '{plot}' has only {elements.svg_ids[plot]} drawing elements")
    for text in elements.missing:
        problems.append(f"the page says a plot is missing: {text}")

    with open(layout_path, encoding="utf-8") as f:
        match = re.search(r'<pre id="st-layout">(.*?)</pre>', f.read(), re.S)
    if not match:
        problems.append("the measuring script did not run")
    else:
        sizes = {}
        for line in match.group(1).strip().splitlines():
            name, w, h = line.split()
            sizes[name] = (float(w), float(h))
        for plot in plots:
            w, h = sizes.get(plot, (0.0, 0.0))
            if w < 100 or h < 100:
                problems.append(f"plot '{plot}' is laid out at {w:.0f}×{h:.0f} px")

    with open(console_path, encoding="utf-8", errors="replace") as f:
        for line in f:
            if ":CONSOLE" in line:
                problems.append("console: " + line.strip())

    share = png_ink_share(png_path)
    if share < MIN_INK_SHARE:
        problems.append(f"the page looks blank ({100 * share:.2f} % of pixels differ from the background)")

    for p in problems:
        print("browser check: " + p)
    if not problems:
        print(f"browser check: {len(plots)} plots laid out, no console messages, {100 * share:.1f} % ink")
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main())
