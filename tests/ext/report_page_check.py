#!/usr/bin/env python3
# tests/ext/report_page_check.py -- the sample report page written by
# tests/tools/report_demo.c is well-formed, self-contained and readable.
#
# What is checked, and the source of each rule:
#   - the page starts with "<!DOCTYPE html>" and declares UTF-8 in a <meta
#     charset> (HTML Living Standard, 13.1.1 "The DOCTYPE" and 4.2.5.4
#     "Specifying the document's character encoding");
#   - every non-void element is closed in order (checked with Python's
#     html.parser; void elements from HTML Living Standard 13.1.2);
#   - the page is self-contained: no <script>, no src= or href= attribute,
#     no url( or @import in CSS, no http:// or https:// anywhere except the
#     SVG namespace name, which is an identifier and never fetched
#     (Namespaces in XML 1.0, section 2); a page that needs nothing from the
#     network is common practice for reports that get mailed around, and the
#     page's Content-Security-Policy meta (W3C CSP Level 3) says default-src
#     'none';
#   - each inline <svg> parses as XML with xml.etree (the reference parser
#     here) in the SVG namespace (SVG 1.1, section 5.1);
#   - heat-map cells: the fill's CIE L* (computed here from the hex colour
#     with the sRGB transfer of IEC 61966-2-1 and CIE 1976 L*, formulas from
#     memory) falls evenly with the row share, 97 - 69 * share, and the count
#     written on it has a contrast ratio of at least 4.5:1 (WCAG 2.1, success
#     criterion 1.4.3, contrast formula from WCAG 2.1 "relative luminance");
#   - heat-map counts are written with one number of decimals throughout
#     (mixed "0.333" and "79.3" are hard to compare; common practice);
#   - whiskers (bar chart, interval rows): both ends carry the same cap, and
#     no pale halo stroke is drawn under them, which over a filled bar showed
#     as a box at one end only; the whisker ink keeps at least 3:1 contrast
#     on the bar colours under it (WCAG 2.1 success criterion 1.4.11);
#   - the terminal table printed by report_demo lines up: every line of the
#     table has the same display width, with widths computed by Python's
#     unicodedata.east_asian_width (Unicode Standard Annex #11).
# Prints each check; ends with "N passed, N failed"; exits 1 on any failure.

import html.parser
import os
import re
import subprocess
import sys
import tempfile
import unicodedata
import xml.etree.ElementTree as ET

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__))))
from tally import check, finish  # noqa: E402

BUILD = os.environ.get('BUILDDIR', 'build')
DEMO = os.path.join(BUILD, 'tests', 'report_demo')
SVG_NS = 'http://www.w3.org/2000/svg'
VOID = {'area', 'base', 'br', 'col', 'embed', 'hr', 'img', 'input', 'link', 'meta',
        'source', 'track', 'wbr'}

class Nesting(html.parser.HTMLParser):
    """Tracks open elements; records the first misnested close."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack, self.error, self.attrs = [], None, []

    def handle_starttag(self, tag, attrs):
        self.attrs.extend(name for name, _ in attrs)
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        self.attrs.extend(name for name, _ in attrs)

    def handle_endtag(self, tag):
        if not self.stack or self.stack[-1] != tag:
            self.error = self.error or 'close </%s> with open %s' % (tag, self.stack[-3:])
        else:
            self.stack.pop()


def srgb_lin(c):
    c /= 255.0
    return c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4


def rel_lum(hexcol):
    r, g, b = (int(hexcol[i:i + 2], 16) for i in (1, 3, 5))
    # WCAG 2.1 relative luminance coefficients (ITU-R BT.709 primaries)
    return 0.2126 * srgb_lin(r) + 0.7152 * srgb_lin(g) + 0.0722 * srgb_lin(b)


def lstar(hexcol):
    y = rel_lum(hexcol)   # Y of D65 sRGB equals the luminance above
    f = y ** (1 / 3) if y > (6 / 29) ** 3 else y / (3 * (6 / 29) ** 2) + 4 / 29
    return 116 * f - 16


def contrast(a, b):
    la, lb = sorted((rel_lum(a), rel_lum(b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)


def width(s):
    return sum(0 if unicodedata.combining(ch) else
               2 if unicodedata.east_asian_width(ch) in 'WF' else 1 for ch in s)


def main():
    if not os.path.exists(DEMO):
        check(False, '%s is built' % DEMO)
        return finish()
    with tempfile.TemporaryDirectory() as tmp:
        out = os.path.join(tmp, 'page.html')
        run = subprocess.run([DEMO, out], capture_output=True, text=True, timeout=60)
        check(run.returncode == 0, 'report_demo exits 0 (%s)' % run.stderr.strip())
        with open(out, encoding='utf-8') as f:
            page = f.read()

    check(page.startswith('<!DOCTYPE html>\n'), 'page starts with the HTML5 doctype')
    check('<meta charset="utf-8">' in page, 'UTF-8 declared in <meta charset>')
    nest = Nesting()
    nest.feed(page)
    nest.close()
    check(nest.error is None and nest.stack == [],
          'elements close in order (%s, left open %s)' % (nest.error, nest.stack))
    check('<script' not in page.lower(), 'no <script')
    check(not {'src', 'href'} & set(nest.attrs), 'no src= or href= attributes')
    check('url(' not in page and '@import' not in page, 'no url( or @import in CSS')
    rest = page.replace('xmlns="%s"' % SVG_NS, '')
    check(re.search(r'https?://', rest) is None, 'no http(s):// besides the SVG namespace')
    check("default-src 'none'" in page, "Content-Security-Policy default-src 'none'")

    svgs = re.findall(r'<svg .*?</svg>', page, re.S)
    check(len(svgs) == 5, '5 inline charts (found %d)' % len(svgs))
    roots = []
    for i, s in enumerate(svgs):
        try:
            root = ET.fromstring(s)
            roots.append(root)
            check(root.tag == '{%s}svg' % SVG_NS and root.get('viewBox'),
                  'chart %d parses as SVG with a viewBox' % (i + 1))
        except ET.ParseError as e:
            check(False, 'chart %d parses as XML: %s' % (i + 1, e))

    # Heat map: first chart.  Each cell is <g><title>.. (P% of row)</title><rect/><text/></g>.
    cells = 0
    worst_l, lowest_c = 0.0, 99.0
    monotone = []
    if roots:
        for g in roots[0].iter('{%s}g' % SVG_NS):
            t = g.find('{%s}title' % SVG_NS)
            r = g.find('{%s}rect' % SVG_NS)
            x = g.find('{%s}text' % SVG_NS)
            m = re.search(r'\(([0-9.]+)% of row\)', t.text if t is not None else '')
            if not (m and r is not None and x is not None):
                continue
            cells += 1
            share = float(m.group(1)) / 100
            fill = r.get('fill')
            worst_l = max(worst_l, abs(lstar(fill) - (97 - 69 * share)))
            lowest_c = min(lowest_c, contrast(fill, x.get('fill')))
            monotone.append((share, lstar(fill)))
    check(cells == 36, 'heat map has 6 x 6 cells (found %d)' % cells)
    check(worst_l < 1.5, 'cell L* = 97 - 69 * share within 1.5 (worst %.2f)' % worst_l)
    monotone.sort()
    check(all(a[1] >= b[1] - 1e-9 for a, b in zip(monotone, monotone[1:])),
          'darker cells mean larger shares')
    check(lowest_c >= 4.5, 'count text contrast >= 4.5:1 (WCAG 2.1 1.4.3; lowest %.2f)' % lowest_c)

    decimals = set()
    if roots:
        for g in roots[0].iter('{%s}g' % SVG_NS):
            x = g.find('{%s}text' % SVG_NS)
            if x is not None and x.text and re.fullmatch(r'-?[0-9]+(\.[0-9]+)?', x.text):
                decimals.add(len(x.text.split('.')[1]) if '.' in x.text else 0)
    check(len(decimals) == 1, 'heat-map counts share one number of decimals (%s)' % sorted(decimals))

    # Whiskers: a path "Mxa yHxb Mxa y1Vy2 Mxb y1Vy2" in the bar chart (2nd)
    # and the interval rows (4th chart).
    wpat = re.compile(r'M([-0-9.]+) ([-0-9.]+)H([-0-9.]+)M([-0-9.]+) ([-0-9.]+)V([-0-9.]+)'
                      r'M([-0-9.]+) ([-0-9.]+)V([-0-9.]+)$')
    whiskers, alike, halo = 0, 0, 0
    bar_fills = set()
    for root in (roots[1], roots[3]) if len(roots) >= 4 else ():
        for el in root.iter('{%s}path' % SVG_NS):
            m = wpat.match(el.get('d', ''))
            if not m:
                continue
            v = [float(t) for t in m.groups()]
            whiskers += 1
            if el.get('stroke', '').lower() in ('#ffffff', '#fff', 'white'):
                halo += 1
                continue
            if (abs(v[3] - v[0]) < 1e-6 and abs(v[6] - v[2]) < 1e-6
                    and abs((v[5] - v[4]) - (v[8] - v[7])) < 1e-6):
                alike += 1
                ink = el.get('stroke')
        for el in root.iter('{%s}rect' % SVG_NS):
            if root is roots[1] and el.get('height') == '11.0':
                bar_fills.add(el.get('fill'))
    check(whiskers >= 18 + 5 and halo == 0 and alike == whiskers,
          'whiskers have equal caps at both ends, no halo (%d whiskers, %d alike, %d halo)'
          % (whiskers, alike, halo))
    low = min((contrast(ink, f) for f in bar_fills), default=0) if alike else 0
    check(low >= 3.0, 'whisker ink on bar colours >= 3:1 (WCAG 2.1 1.4.11; lowest %.2f)' % low)

    # Terminal table from stdout: header, rule, rows all the same width.
    lines = [ln for ln in run.stdout.split('\n') if ln]
    widths = {width(ln) for ln in lines}
    check(len(lines) == 8 and len(widths) == 1,
          'terminal table lines share one display width (%s)' % sorted(widths))
    check(lines[0].startswith('queue') and set(lines[1]) == {'-'},
          'terminal table has header and rule')

    return finish()


if __name__ == '__main__':
    sys.exit(main())
