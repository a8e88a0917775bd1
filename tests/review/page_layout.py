#!/usr/bin/env python3
"""page_layout.py — measures a concord HTML page's layout in headless Chromium.

The page forbids scripts (its Content-Security-Policy), so a copy without that
meta tag gets a small measuring script appended; Chromium's --dump-dom prints
the DOM after the script ran, and the result is read back from it. Checked at
each window width:
  - the page does not scroll sideways, and no element reaches past <main>'s
    edges, except the contents of a .scroll container (wide tables scroll
    inside their box);
  - no SVG text reaches past its own <svg> (it would be clipped);
  - no two unrotated SVG texts of one chart overlap.

Usage: page_layout.py CHROMIUM PAGE.html TMPDIR WIDTH...    (exit 1 on a failure)
"""
import html
import json
import os
import re
import subprocess
import sys

MEASURE = r"""<script>
window.addEventListener('load', () => {
  const main = document.querySelector('main'), mr = main.getBoundingClientRect();
  const out = [], clip = [], lap = [];
  for (const el of main.querySelectorAll('*')) {
    if (el.parentElement && el.parentElement.closest('.scroll')) continue;
    const r = el.getBoundingClientRect();
    if (r.width > 0 && (r.right > mr.right + 0.5 || r.left < mr.left - 0.5))
      out.push(el.tagName + (el.id ? '#' + el.id : '') + ' ' + Math.round(r.left) + '..' + Math.round(r.right));
  }
  for (const svg of main.querySelectorAll('svg')) {
    const b = svg.getBoundingClientRect();
    const texts = [];
    for (const t of svg.querySelectorAll('text')) {
      const r = t.getBoundingClientRect();
      if (!r.width) continue;
      if (r.right > b.right + 1 || r.left < b.left - 1 || r.top < b.top - 1 || r.bottom > b.bottom + 1)
        clip.push(svg.id + ': "' + t.textContent.slice(0, 30) + '"');
      if (!(t.getAttribute('transform') || '').includes('rotate')) texts.push([t.textContent, r]);
    }
    for (let i = 0; i < texts.length; i++)
      for (let j = i + 1; j < texts.length; j++) {
        const a = texts[i][1], c = texts[j][1];
        const ox = Math.min(a.right, c.right) - Math.max(a.left, c.left);
        const oy = Math.min(a.bottom, c.bottom) - Math.max(a.top, c.top);
        if (ox > 1 && oy > 1) lap.push(svg.id + ': "' + texts[i][0].slice(0, 20) + '" / "' + texts[j][0].slice(0, 20) + '"');
      }
  }
  const o = document.createElement('pre');
  o.id = 'layout-measure';
  o.textContent = JSON.stringify({scroll_width: document.documentElement.scrollWidth,
                                  inner_width: innerWidth, outside: out, clipped: clip, overlaps: lap});
  document.body.appendChild(o);
});
</script>"""


def measure(chromium, page, tmp, width):
    text = open(page, encoding="utf-8").read()
    text = re.sub(r'<meta http-equiv="Content-Security-Policy"[^>]*>', "", text)
    copy = os.path.join(tmp, f"measure-{width}.html")
    with open(copy, "w", encoding="utf-8") as f:
        f.write(text.replace("</body>", MEASURE + "</body>"))
    profile = os.path.join(tmp, f"profile-{width}")
    cmd = ["timeout", "-k", "10", "120", chromium, "--headless", "--no-sandbox", "--disable-gpu",
           "--no-first-run", "--disable-extensions", "--disable-background-networking",
           "--hide-scrollbars", f"--user-data-dir={profile}", f"--window-size={width},3000",
           "--dump-dom", "file://" + copy]
    dom = subprocess.run(cmd, capture_output=True, text=True).stdout
    m = re.search(r'<pre id="layout-measure">(.*?)</pre>', dom, re.S)
    if not m:
        sys.exit(f"page_layout: Chromium returned no measurement for {page} at {width} px "
                 "(it hung or failed; the call is bounded by a 120 s timeout)")
    return json.loads(html.unescape(m.group(1)))


def main():
    chromium, page, tmp, widths = sys.argv[1], sys.argv[2], sys.argv[3], sys.argv[4:]
    bad = []
    for w in widths:
        r = measure(chromium, page, tmp, int(w))
        name = f"{os.path.basename(page)} at {w} px"
        if r["scroll_width"] > r["inner_width"]:
            bad.append(f"{name}: the page scrolls sideways ({r['scroll_width']} > {r['inner_width']})")
        bad += [f"{name}: past the page's edge: {e}" for e in r["outside"][:10]]
        bad += [f"{name}: clipped by its chart: {e}" for e in r["clipped"][:10]]
        bad += [f"{name}: labels overlap: {e}" for e in r["overlaps"][:10]]
        print(f"page_layout: {name}: {len(r['outside'])} elements past the edge, "
              f"{len(r['clipped'])} clipped labels, {len(r['overlaps'])} overlapping labels")
    for b in bad:
        print("FAIL:", b)
    sys.exit(1 if bad else 0)


if __name__ == "__main__":
    main()
