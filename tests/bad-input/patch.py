#!/usr/bin/env python3
"""patch.py FILE OFFSET FMT VALUE -- overwrite bytes of FILE at OFFSET with
VALUE packed by Python's struct format FMT (e.g. '<Q' for a little-endian
u64).  The bad-input cases use it to make packed stores whose header lies."""
import struct
import sys

path, off, fmt, val = sys.argv[1], int(sys.argv[2], 0), sys.argv[3], sys.argv[4]
data = bytearray(open(path, 'rb').read())
packed = struct.pack(fmt, int(val, 0))
data[off:off + len(packed)] = packed
open(path, 'wb').write(bytes(data))
