#!/usr/bin/env python3
# tests/cli/report_screenshot.py -- renders the sample report page in a
# headless browser (Debian's chromium) and checks the screenshot.
#
# The browser is the outside reference: if the page were broken HTML or SVG
# it would render blank or as raw text.  Checks:
#   - chromium exits 0 and writes a PNG of more than 10 kB;
#   - the file has the PNG signature and an IHDR chunk of 1200 x 1600
#     (PNG specification, ISO/IEC 15948, sections 5.2 and 11.2.2);
#   - decoded (zlib + the five PNG filter types, section 9), at least 5 % of
#     the pixels are not white and there are more than 40 distinct colours
#     (the heat-map ramp and the series colours): something was drawn.
# chromium missing is a FAILURE, not a skip: .ci/run installs it through
# tools/install-deps.
# usage: report_screenshot.py [--keep OUT.png] [--height H]
# Prints each check; ends with "N passed, N failed"; exits 1 on any failure.

import os
import shutil
import struct
import subprocess
import sys
import tempfile
import zlib

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), '..', 'ext'))
from tally import check, finish  # noqa: E402

BUILD = os.environ.get('BUILDDIR', 'build')
DEMO = os.path.join(BUILD, 'tests', 'report_demo')
def paeth(a, b, c):
    p = a + b - c
    pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
    return a if pa <= pb and pa <= pc else b if pb <= pc else c


def decode(png):
    """(width, height, rows of bytes, bytes per pixel) of an 8-bit, non-interlaced RGB(A) PNG."""
    pos, idat, ihdr = 8, b'', None
    while pos < len(png):
        n, kind = struct.unpack('>I4s', png[pos:pos + 8])
        data = png[pos + 8:pos + 8 + n]
        if kind == b'IHDR':
            ihdr = struct.unpack('>IIBBBBB', data)
        elif kind == b'IDAT':
            idat += data
        pos += 12 + n
    w, h, depth, ctype, _, _, interlace = ihdr
    if depth != 8 or ctype not in (2, 6) or interlace:
        raise ValueError('unexpected PNG format %r' % (ihdr,))
    bpp = 3 if ctype == 2 else 4
    raw, stride, rows, prev = zlib.decompress(idat), w * bpp, [], bytearray(w * bpp)
    for y in range(h):
        f = raw[y * (stride + 1)]
        line = bytearray(raw[y * (stride + 1) + 1:(y + 1) * (stride + 1)])
        for i in range(stride):
            a = line[i - bpp] if i >= bpp else 0
            b, c = prev[i], prev[i - bpp] if i >= bpp else 0
            line[i] = (line[i] + (0, a, b, (a + b) // 2, paeth(a, b, c))[f]) & 255
        rows.append(line)
        prev = line
    return w, h, rows, bpp


def main():
    keep, height = None, 1600
    args = sys.argv[1:]
    while args:
        if args[0] == '--keep':
            keep = args[1]
        elif args[0] == '--height':
            height = int(args[1])
        args = args[2:]
    browser = shutil.which('chromium')
    if not check(browser is not None, 'chromium is installed (tools/install-deps)'):
        return finish()
    with tempfile.TemporaryDirectory() as tmp:
        page, shot = os.path.join(tmp, 'page.html'), os.path.join(tmp, 'shot.png')
        check(subprocess.run([DEMO, page], capture_output=True).returncode == 0,
              'report_demo writes the page')
        cmd = [browser, '--headless', '--no-sandbox', '--disable-gpu', '--disable-quic',
               '--no-first-run', '--disable-background-networking', '--disable-component-update',
               '--disable-sync', '--user-data-dir=' + os.path.join(tmp, 'profile'),
               '--screenshot=' + shot, '--window-size=1200,%d' % height, 'file://' + page]
        try:
            status = subprocess.run(cmd, capture_output=True, timeout=150).returncode
        except subprocess.TimeoutExpired:
            status = 'timeout after 150 s'
        check(status == 0, 'chromium exits 0 (%s)' % status)
        size = os.path.getsize(shot) if os.path.exists(shot) else 0
        check(size > 10000, 'screenshot is larger than 10 kB (%d bytes)' % size)
        if size:
            with open(shot, 'rb') as f:
                png = f.read()
            check(png[:8] == b'\x89PNG\r\n\x1a\n', 'PNG signature')
            w, h = struct.unpack('>II', png[16:24])
            check(png[12:16] == b'IHDR' and (w, h) == (1200, height),
                  'IHDR is 1200 x %d (got %d x %d)' % (height, w, h))
            w, h, rows, bpp = decode(png)
            colours, ink = set(), 0
            for line in rows[::2]:
                for x in range(0, w * bpp, 2 * bpp):
                    px = bytes(line[x:x + 3])
                    colours.add(px)
                    ink += px != b'\xff\xff\xff'
            share = ink / (len(rows[::2]) * len(range(0, w * bpp, 2 * bpp)))
            check(share > 0.05, 'non-white share %.3f > 0.05' % share)
            check(len(colours) > 40, '%d distinct colours > 40' % len(colours))
            if keep:
                shutil.copyfile(shot, keep)
    return finish()


if __name__ == '__main__':
    sys.exit(main())
