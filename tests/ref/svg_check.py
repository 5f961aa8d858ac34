#!/usr/bin/env python3
"""svg_check.py - checks on pacemap's pictures, independent of its C code.

  svg_check.py fit FILE.svg...   every <text> lies inside the viewBox
  svg_check.py palette FILE.c    the palette keeps its design rule

Text width is estimated on the safe side, as docs/guide.md ("Pictures")
states: 0.62 em per character (0.68 em bold), font size from the element,
its class (the Gantt chart's style sheet) or the root.  Anchors start,
middle and end and rotate(-90 cx cy) are honoured.

Lightness is CIELAB L* (CIE 15:2004) of sRGB (IEC 61966-2-1) with the D65
white, computed here from the hex values: the iteration fills must step by
at least 8 and the two loop colours differ by at least 8.
"""
import re
import sys
import xml.etree.ElementTree as ET

NS = "{http://www.w3.org/2000/svg}"


def size_of(el, root_size, classes):
    if el.get("font-size"):
        return float(el.get("font-size"))
    for c in (el.get("class") or "").split():
        if c in classes:
            return classes[c]
    return root_size


def text_box(el, root_size, classes):
    s = "".join(el.itertext())
    px = size_of(el, root_size, classes)
    em = 0.68 if el.get("font-weight") == "bold" else 0.62
    w = len(s) * px * em
    x, y = float(el.get("x", 0)), float(el.get("y", 0))
    anchor = el.get("text-anchor", "start")
    x0 = {"start": x, "middle": x - w / 2, "end": x - w}[anchor]
    box = (x0, y - px, x0 + w, y + px * 0.3)
    m = re.search(r"rotate\(-90 ([-\d.]+) ([-\d.]+)\)", el.get("transform", ""))
    if m:  # turned about (cx, cy): x extent becomes y extent
        cx, cy = float(m.group(1)), float(m.group(2))
        box = (cx - px, cy - (box[2] - cx), cx + px * 0.3, cy - (box[0] - cx))
    return s, box


def fit(paths):
    bad = 0
    for p in paths:
        root = ET.parse(p).getroot()
        _, _, W, H = (float(v) for v in root.get("viewBox").split())
        root_size = float(root.get("font-size", 11))
        classes = {}
        for st in root.iter(NS + "style"):
            for name, size in re.findall(r"\.(\w+)\{[^}]*font-size:(\d+)px", st.text or ""):
                classes[name] = float(size)
            m = re.search(r"text\{[^}]*font-size:(\d+)px", st.text or "")
            if m:
                root_size = float(m.group(1))
        for el in root.iter(NS + "text"):
            s, (x0, y0, x1, y1) = text_box(el, root_size, classes)
            if x0 < 0 or y0 < 0 or x1 > W or y1 > H:
                print("%s: text outside %gx%g: %r at (%.0f,%.0f)-(%.0f,%.0f)"
                      % (p, W, H, s[:60], x0, y0, x1, y1))
                bad += 1
    return bad


def lightness(hexcol):
    def lin(c):
        c /= 255.0
        return c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4
    r, g, b = (lin(int(hexcol[i:i + 2], 16)) for i in (1, 3, 5))
    y = 0.2126 * r + 0.7152 * g + 0.0722 * b
    f = y ** (1 / 3) if y > 216 / 24389 else (24389 / 27 * y + 16) / 116
    return 116 * f - 16


def palette(path):
    text = open(path).read()
    it = re.search(r"pm_palette_iteration\[PM_PALETTE_NITER\] = \{(.*?)\};", text, re.S)
    fills = re.findall(r'"(#[0-9a-fA-F]{6})"', it.group(1))
    ls = [lightness(c) for c in fills]
    bad = 0
    if len(fills) != 6:
        print("want 6 iteration fills, found %d" % len(fills))
        bad += 1
    for a, b in zip(ls, ls[1:]):
        if abs(a - b) < 7.5:  # 8 apart, less rounding to 8-bit values
            print("iteration fills too close in lightness: %.1f %.1f" % (a, b))
            bad += 1
    if min(abs(a - b) for i, a in enumerate(ls) for b in ls[i + 1:]) < 7.5:
        print("two iteration fills too close in lightness")
        bad += 1
    crit = re.search(r'pm_palette_critical\[\] = "(#\w+)"', text).group(1)
    near = re.search(r'pm_palette_near\[\] = "(#\w+)"', text).group(1)
    if abs(lightness(crit) - lightness(near)) < 7.5:
        print("critical and near loop colours too close in lightness")
        bad += 1
    print("iteration fills L* = " + ", ".join("%.0f" % v for v in ls)
          + "; critical %.0f, near %.0f" % (lightness(crit), lightness(near)))
    return bad


if __name__ == "__main__":
    if sys.argv[1] == "fit":
        sys.exit(1 if fit(sys.argv[2:]) else 0)
    sys.exit(1 if palette(sys.argv[2]) else 0)
