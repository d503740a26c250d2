#!/usr/bin/python3
"""Lays a report page out in headless Chromium at given widths and checks it.

Usage: page_audit.py PAGE.html --out DIR [--widths 1400,800] [--chromium PATH]
                     [--axe axe.min.js] [--axe-only]

For each width W it
  * saves a screenshot of the whole page as DIR/<page>-<W>px.png;
  * fails when anything scrolls sideways: the document's scrollWidth exceeds its
    clientWidth, an element reaches past the right or left edge of the viewport, or an
    element that may scroll (overflow-x auto or scroll) holds more than it shows.
With --axe it also runs axe-core's WCAG 2.0 and 2.1 level A and AA rules on the page at
the first width (with --axe-only, nothing else) and fails on any violation of impact "serious" or "critical" (minor and
moderate ones are printed). Without --axe, or when the file is missing, the audit is
skipped with a line saying so ("SKIP axe").

Nothing drives the browser: the script to run goes into a copy of the page (with the
page's content-security policy, which forbids scripts, taken out of the copy), writes its
findings as JSON into the DOM, and `chromium --dump-dom` hands the DOM back.
Exit code 0 when every check passes, 1 when one fails, 77 when Chromium is missing.
"""
import argparse
import json
import os
import re
import shutil
import subprocess
import sys
import tempfile

# Runs after layout: the page's width facts and every element that sticks out sideways.
LAYOUT_SCRIPT = r"""
(function () {
  const doc = document.documentElement;
  const width = doc.clientWidth;
  const found = [];
  const reported = new Set();  // an element inside one already reported is not listed
  const name = (el) => el.tagName.toLowerCase() + (el.id ? '#' + el.id : '') +
      (el.getAttribute('class') ? '.' + el.getAttribute('class').split(' ').join('.') : '');
  for (const el of document.body.querySelectorAll('*')) {
    if (el.closest('svg') && el.tagName.toLowerCase() !== 'svg') continue;
    const r = el.getBoundingClientRect();
    if (r.width === 0 && r.height === 0) continue;
    if (reported.has(el.parentElement)) {
      reported.add(el);
      continue;
    }
    const style = getComputedStyle(el);
    if (r.right > width + 0.5 || r.left < -0.5) {
      found.push({element: name(el), problem: 'reaches past the viewport',
                  left: Math.round(r.left), right: Math.round(r.right)});
      reported.add(el);
    } else if ((style.overflowX === 'auto' || style.overflowX === 'scroll') &&
               el.scrollWidth > el.clientWidth + 1) {
      found.push({element: name(el), problem: 'scrolls sideways',
                  scrollWidth: el.scrollWidth, clientWidth: el.clientWidth});
      reported.add(el);
    }
  }
  const out = document.createElement('pre');
  out.id = 'page-audit-layout';
  out.hidden = true;
  out.textContent = JSON.stringify({viewport: window.innerWidth, clientWidth: width,
      scrollWidth: doc.scrollWidth, height: doc.scrollHeight, elements: found});
  document.body.appendChild(out);
})();
"""

AXE_SCRIPT = r"""
axe.run(document, {runOnly: {type: 'tag', values: ['wcag2a', 'wcag2aa', 'wcag21a', 'wcag21aa']},
                   resultTypes: ['violations']})
  .then(function (result) {
    const out = document.createElement('pre');
    out.id = 'page-audit-axe';
    out.hidden = true;
    out.textContent = JSON.stringify(result.violations.map(function (v) {
      return {id: v.id, impact: v.impact, help: v.help,
              nodes: v.nodes.slice(0, 5).map(function (n) {
                return {target: n.target, summary: n.failureSummary}; }),
              count: v.nodes.length};
    }));
    document.body.appendChild(out);
  })
  .catch(function (e) {
    const out = document.createElement('pre');
    out.id = 'page-audit-axe';
    out.textContent = JSON.stringify({error: String(e)});
    document.body.appendChild(out);
  });
"""


def chromium_run(chromium, profile, extra, url):
    command = [chromium, "--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars",
               "--no-first-run", "--disable-extensions", "--disable-background-networking",
               f"--user-data-dir={profile}"] + extra + [url]
    return subprocess.run(command, capture_output=True, text=True, timeout=120)


def with_script(html, scripts):
    """The page without its content-security policy, with `scripts` before </body>."""
    html = re.sub(r'<meta http-equiv="Content-Security-Policy"[^>]*>\n?', "", html)
    tags = "".join(f"<script>{s}</script>\n" for s in scripts)
    at = html.rfind("</body>")
    return html[:at] + tags + html[at:]


def found_json(dom, element_id):
    match = re.search(rf'<pre id="{element_id}"[^>]*>(.*?)</pre>', dom, re.S)
    if not match:
        return None
    text = match.group(1)
    for entity, char in (("&lt;", "<"), ("&gt;", ">"), ("&quot;", '"'), ("&#39;", "'"),
                         ("&amp;", "&")):
        text = text.replace(entity, char)
    return json.loads(text)


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("page")
    parser.add_argument("--out", required=True)
    parser.add_argument("--widths", default="1400,800")
    parser.add_argument("--chromium", default=shutil.which("chromium") or "/usr/bin/chromium")
    parser.add_argument("--axe")
    parser.add_argument("--axe-only", action="store_true")
    args = parser.parse_args()
    if not os.path.exists(args.chromium):
        print(f"chromium not found at {args.chromium}")
        return 77
    os.makedirs(args.out, exist_ok=True)
    html = open(args.page, encoding="utf-8").read()
    stem = os.path.splitext(os.path.basename(args.page))[0]
    widths = [int(w) for w in args.widths.split(",")]
    failures = []
    with tempfile.TemporaryDirectory() as work:
        probe = os.path.join(work, "layout.html")
        with open(probe, "w", encoding="utf-8") as f:
            f.write(with_script(html, [LAYOUT_SCRIPT]))
        for width in [] if args.axe_only else widths:
            run = chromium_run(args.chromium, os.path.join(work, f"p{width}"),
                               ["--dump-dom", f"--window-size={width},1000"], "file://" + probe)
            layout = found_json(run.stdout, "page-audit-layout")
            if layout is None:
                failures.append(f"{width}px: no layout result (exit {run.returncode}): "
                                f"{run.stderr[-1500:]}")
                continue
            print(f"{width}px: viewport {layout['viewport']}, document {layout['scrollWidth']} "
                  f"wide, {layout['height']} high")
            if layout["viewport"] != width:
                failures.append(f"{width}px: Chromium laid the page out {layout['viewport']} wide")
            if layout["scrollWidth"] > layout["clientWidth"]:
                failures.append(f"{width}px: the page scrolls sideways: scrollWidth "
                                f"{layout['scrollWidth']} > clientWidth {layout['clientWidth']}")
            for element in layout["elements"][:20]:
                failures.append(f"{width}px: {json.dumps(element)}")
            # The whole page in one picture: the window as high as the document.
            png = os.path.abspath(os.path.join(args.out, f"{stem}-{width}px.png"))
            height = min(max(layout["height"], 600), 16000)
            shot = chromium_run(args.chromium, os.path.join(work, f"s{width}"),
                                [f"--screenshot={png}", f"--window-size={width},{height}"],
                                "file://" + os.path.abspath(args.page))
            if shot.returncode != 0 or not os.path.exists(png):
                failures.append(f"{width}px: screenshot failed (exit {shot.returncode})")
            else:
                print(f"{width}px: screenshot {png}")
        if not args.axe or not os.path.exists(args.axe):
            print(f"SKIP axe: axe-core not found ({args.axe or 'no --axe given'}); "
                  "scripts/bootstrap installs it")
        else:
            audited = os.path.join(work, "axe.html")
            with open(audited, "w", encoding="utf-8") as f:
                f.write(with_script(html, [open(args.axe, encoding="utf-8").read(), AXE_SCRIPT]))
            run = chromium_run(args.chromium, os.path.join(work, "axe"),
                               ["--dump-dom", "--virtual-time-budget=60000",
                                f"--window-size={widths[0]},1000"], "file://" + audited)
            violations = found_json(run.stdout, "page-audit-axe")
            if violations is None or isinstance(violations, dict):
                failures.append(f"axe: no result ({violations}; exit {run.returncode})")
            else:
                print(f"axe: {len(violations)} rule(s) violated")
                for v in violations:
                    line = f"axe {v['impact']}: {v['id']} ({v['count']} nodes): {v['help']}"
                    for node in v["nodes"]:
                        line += f"\n    {node['target']}: {node['summary']}"
                    if v["impact"] in ("serious", "critical"):
                        failures.append(line)
                    else:
                        print(line)
    for failure in failures:
        print("FAIL", failure)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
