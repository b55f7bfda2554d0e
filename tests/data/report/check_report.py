#!/usr/bin/python3
"""Checks of report output with Debian's Python standard library (run with /usr/bin/python3).

  check_report.py xml FILE...   every file parses as XML (xml.etree.ElementTree)
  check_report.py html FILE     html.parser: balanced non-void tags, nothing fetched (no link, img,
                                iframe, object, src= or href= to another document; scripts only
                                inline, with no fetch, XMLHttpRequest, import, worker, socket or
                                URL but the SVG namespace), every inline <svg> parses as XML;
                                prints JSON {"ids": [...], "svg_count": n, "script_count": n}
  check_report.py png FILE      decodes the PNG with zlib; prints JSON {"width", "height", "distinct"}
Exit code 0 when the check holds, 1 with a message on stderr otherwise.
"""
import json
import re
import struct
import sys
import zlib
import xml.etree.ElementTree as ET
from html.parser import HTMLParser

VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source", "track", "wbr"}
FORBIDDEN = {"link", "img", "iframe", "object", "embed", "audio", "video", "source"}
# Script types a self-contained page may carry: classic inline script and inline JSON data.
SCRIPT_TYPES = {None, "text/javascript", "application/json"}
# What an inline script must not contain: ways to load or send anything, and any URL but the SVG
# namespace name (createElementNS), which names a vocabulary and is never fetched.
SCRIPT_FORBIDDEN = re.compile(r"\bfetch\b|XMLHttpRequest|\bimport\b|importScripts|\bWorker\b|WebSocket|"
                              r"EventSource|sendBeacon|\beval\b|\bFunction\(|document\.write|\.src\b|"
                              r"\bhref\b|\bwindow\.open\b|\blocation\b")
URL = re.compile(r"[a-z][a-z0-9+.-]*://|//[a-z0-9.-]+\.[a-z]", re.I)
SVG_NAMESPACE = "http://www.w3.org/2000/svg"
# SVG elements that may be written self-closing (<line/>) inside the HTML.
SVG_NAMES = {"svg", "line", "rect", "path", "circle", "text", "title", "defs", "clippath", "g", "polyline"}


class Checker(HTMLParser):
    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack = []
        self.ids = []
        self.errors = []
        self.scripts = 0
        self.in_script = False

    def handle_starttag(self, tag, attrs):
        attributes = dict(attrs)
        if tag in FORBIDDEN:
            self.errors.append("forbidden element <%s>" % tag)
        if tag == "script":
            self.scripts += 1
            self.in_script = True
            if "src" in attributes:
                self.errors.append("script fetched from another document: src=%r" % attributes["src"])
            if attributes.get("type") not in SCRIPT_TYPES:
                self.errors.append("script of type %r" % attributes.get("type"))
        for name, value in attrs:
            if name in ("src", "href") or (value and re.search(r"url\((?!#)", value)):
                self.errors.append("reference to another document: %s=%r" % (name, value))
        if "id" in attributes and tag == "section":
            self.ids.append(attributes["id"])
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        if tag not in SVG_NAMES and tag not in VOID:
            self.errors.append("self-closed non-void element <%s/>" % tag)
        for name, value in attrs:
            if name in ("src", "href"):
                self.errors.append("reference to another document: %s=%r" % (name, value))

    def handle_data(self, data):
        if not self.in_script:
            return
        found = SCRIPT_FORBIDDEN.search(data)
        if found:
            self.errors.append("inline script uses %r" % found.group(0))
        for url in URL.finditer(data.replace(SVG_NAMESPACE, "")):
            self.errors.append("inline script names a URL: %r" % url.group(0))

    def handle_endtag(self, tag):
        if tag == "script":
            self.in_script = False
        if tag in VOID:
            return
        if not self.stack or self.stack[-1] != tag:
            self.errors.append("unbalanced </%s> (open: %s)" % (tag, self.stack[-3:]))
            return
        self.stack.pop()


def check_xml(paths):
    for path in paths:
        try:
            ET.parse(path)
        except ET.ParseError as error:
            sys.stderr.write("%s: %s\n" % (path, error))
            return 1
    return 0


def check_html(path):
    text = open(path, encoding="utf-8").read()
    checker = Checker()
    checker.feed(text)
    checker.close()
    if checker.stack:
        checker.errors.append("unclosed elements: %s" % checker.stack)
    if not text.startswith("<!DOCTYPE html>"):
        checker.errors.append("no <!DOCTYPE html>")
    svgs = re.findall(r"<svg\b.*?</svg>", text, flags=re.S)
    for index, svg in enumerate(svgs):
        try:
            ET.fromstring(svg)
        except ET.ParseError as error:
            checker.errors.append("inline svg %d: %s" % (index, error))
    if checker.errors:
        sys.stderr.write("%s: %s\n" % (path, "; ".join(checker.errors[:5])))
        return 1
    print(json.dumps({"ids": checker.ids, "svg_count": len(svgs), "script_count": checker.scripts}))
    return 0


def check_png(path):
    data = open(path, "rb").read()
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        sys.stderr.write("%s: not a PNG\n" % path)
        return 1
    pos, idat, header = 8, b"", None
    while pos < len(data):
        length, kind = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + length]
        if kind == b"IHDR":
            header = struct.unpack(">IIBBBBB", body)
        elif kind == b"IDAT":
            idat += body
        pos += 12 + length
    width, height, depth, colour, _, _, interlace = header
    channels = {0: 1, 2: 3, 4: 2, 6: 4}.get(colour)
    if depth != 8 or channels is None or interlace != 0:
        sys.stderr.write("%s: unsupported PNG layout (depth %d, colour %d)\n" % (path, depth, colour))
        return 1
    raw = zlib.decompress(idat)
    stride = width * channels
    previous = bytearray(stride)
    distinct = set()
    pos = 0
    # PNG filters (PNG specification, ISO/IEC 15948, section 9).
    for _ in range(height):
        kind = raw[pos]
        row = bytearray(raw[pos + 1:pos + 1 + stride])
        pos += 1 + stride
        for i in range(stride):
            left = row[i - channels] if i >= channels else 0
            up = previous[i]
            corner = previous[i - channels] if i >= channels else 0
            if kind == 1:
                row[i] = (row[i] + left) & 255
            elif kind == 2:
                row[i] = (row[i] + up) & 255
            elif kind == 3:
                row[i] = (row[i] + ((left + up) >> 1)) & 255
            elif kind == 4:
                p = left + up - corner
                pa, pb, pc = abs(p - left), abs(p - up), abs(p - corner)
                predictor = left if pa <= pb and pa <= pc else (up if pb <= pc else corner)
                row[i] = (row[i] + predictor) & 255
        if len(distinct) < 100000:
            for x in range(0, stride, channels * 7):  # every 7th pixel is plenty to count colours
                distinct.add(bytes(row[x:x + channels]))
        previous = row
    print(json.dumps({"width": width, "height": height, "distinct": len(distinct)}))
    return 0


def main(argv):
    if len(argv) < 3:
        sys.stderr.write(__doc__)
        return 2
    if argv[1] == "xml":
        return check_xml(argv[2:])
    if argv[1] == "html":
        return check_html(argv[2])
    if argv[1] == "png":
        return check_png(argv[2])
    sys.stderr.write(__doc__)
    return 2


if __name__ == "__main__":
    sys.exit(main(sys.argv))
