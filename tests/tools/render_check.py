#!/usr/bin/python3
"""Renders an HTML file in headless Chromium and checks what a reader would see.

Usage: render_check.py PAGE.html [--screenshot OUT.png] [--chromium PATH]
                       [--expect-svg N] [--expect-sections N]

Checks, each printed on failure:
  * the page logs nothing to the browser console (no script errors, no blocked loads:
    the page's content-security policy reports any attempt to fetch something);
  * the DOM Chromium builds holds the expected numbers of <svg> and <section> elements;
  * the screenshot is not blank: enough distinct colours and enough pixels that differ
    from the most common (background) colour. The PNG is decoded here with zlib and
    struct only (PNG specification, W3C Recommendation, second edition 2003).
Exit code 0 when every check passes, 1 when one fails, 77 when Chromium is missing.
"""
import argparse
import os
import re
import shutil
import struct
import subprocess
import sys
import tempfile
import zlib


def decode_png(path):
    """Returns (width, height, rows) with rows as lists of RGB(A) byte strings per pixel."""
    with open(path, "rb") as f:
        data = f.read()
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        raise ValueError(f"{path}: not a PNG file")
    pos, idat, header = 8, [], None
    while pos < len(data):
        (length,) = struct.unpack(">I", data[pos:pos + 4])
        kind = data[pos + 4:pos + 8]
        body = data[pos + 8:pos + 8 + length]
        pos += 12 + length
        if kind == b"IHDR":
            header = struct.unpack(">IIBBBBB", body)
        elif kind == b"IDAT":
            idat.append(body)
        elif kind == b"IEND":
            break
    width, height, depth, colour_type, _, _, interlace = header
    if depth != 8 or colour_type not in (2, 6) or interlace != 0:
        raise ValueError(f"{path}: unsupported PNG layout depth={depth} type={colour_type}")
    bpp = 3 if colour_type == 2 else 4
    raw = zlib.decompress(b"".join(idat))
    stride = width * bpp
    rows, previous, at = [], bytearray(stride), 0
    for _ in range(height):
        kind = raw[at]
        line = bytearray(raw[at + 1:at + 1 + stride])
        at += 1 + stride
        # The five PNG filter types (section 9.2 of the specification).
        for i in range(stride):
            left = line[i - bpp] if i >= bpp else 0
            up = previous[i]
            corner = previous[i - bpp] if i >= bpp else 0
            if kind == 1:
                line[i] = (line[i] + left) & 0xFF
            elif kind == 2:
                line[i] = (line[i] + up) & 0xFF
            elif kind == 3:
                line[i] = (line[i] + ((left + up) >> 1)) & 0xFF
            elif kind == 4:
                p = left + up - corner
                pa, pb, pc = abs(p - left), abs(p - up), abs(p - corner)
                pred = left if pa <= pb and pa <= pc else (up if pb <= pc else corner)
                line[i] = (line[i] + pred) & 0xFF
        rows.append(bytes(line))
        previous = line
    return width, height, bpp, rows


def blankness(path):
    """(distinct colours, fraction of pixels unlike the most common colour)."""
    width, height, bpp, rows = decode_png(path)
    counts = {}
    for line in rows:
        for x in range(0, width * bpp, bpp):
            key = line[x:x + 3]
            counts[key] = counts.get(key, 0) + 1
    background = max(counts.values())
    return len(counts), 1.0 - background / float(width * height)


def run_chromium(chromium, profile, extra, url):
    command = [chromium, "--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars",
               "--no-first-run", "--disable-extensions", "--disable-background-networking",
               "--enable-logging=stderr", "--v=0", f"--user-data-dir={profile}"] + extra + [url]
    return subprocess.run(command, capture_output=True, text=True, timeout=90)


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("page")
    parser.add_argument("--screenshot")
    parser.add_argument("--chromium", default=shutil.which("chromium") or "/usr/bin/chromium")
    parser.add_argument("--expect-svg", type=int)
    parser.add_argument("--expect-sections", type=int)
    parser.add_argument("--window", default="1200,2400")
    args = parser.parse_args()
    if not os.path.exists(args.chromium):
        print(f"chromium not found at {args.chromium}")
        return 77

    failures = []
    url = "file://" + os.path.abspath(args.page)
    with tempfile.TemporaryDirectory() as work:
        png = args.screenshot or os.path.join(work, "page.png")
        shot = run_chromium(args.chromium, os.path.join(work, "profile1"),
                            [f"--screenshot={png}", f"--window-size={args.window}"], url)
        dom = run_chromium(args.chromium, os.path.join(work, "profile2"), ["--dump-dom"], url)
        # Console messages appear in Chromium's log as lines with "CONSOLE"; the page has
        # no script, so any of them (an error, a refused load) is a failure.
        for run in (shot, dom):
            for line in run.stderr.splitlines():
                if re.search(r"CONSOLE|Refused to|Uncaught", line):
                    failures.append(f"console: {line.strip()}")
        if shot.returncode != 0 or not os.path.exists(png):
            failures.append(f"screenshot failed (exit {shot.returncode}): {shot.stderr[-2000:]}")
        else:
            colours, inked = blankness(png)
            print(f"screenshot {png}: {colours} colours, {inked:.1%} of pixels off background")
            if colours < 16 or inked < 0.02:
                failures.append(f"screenshot looks blank: {colours} colours, {inked:.2%} inked")
        if dom.returncode != 0:
            failures.append(f"--dump-dom failed (exit {dom.returncode})")
        else:
            svgs = len(re.findall(r"<svg\b", dom.stdout))
            sections = len(re.findall(r"<section\b", dom.stdout))
            print(f"DOM: {svgs} svg, {sections} section elements")
            if args.expect_svg is not None and svgs != args.expect_svg:
                failures.append(f"DOM has {svgs} <svg> elements, expected {args.expect_svg}")
            if args.expect_sections is not None and sections != args.expect_sections:
                failures.append(
                    f"DOM has {sections} <section> elements, expected {args.expect_sections}")
    for failure in failures:
        print("FAIL", failure)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
