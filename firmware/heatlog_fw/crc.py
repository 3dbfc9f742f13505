"""Table-driven CRCs in plain Python (no binascii/zlib: not every MicroPython port has crc32).

CRC-16/CCITT-FALSE: poly 0x1021, init 0xFFFF, no reflection, no final xor; check value for
b"123456789" is 0x29B1 (catalogue of parametrised CRC algorithms, "CRC-16/CCITT-FALSE").
CRC-32 (ISO-HDLC, as zlib): reflected poly 0xEDB88320, init/xorout 0xFFFFFFFF; check 0xCBF43926.
CRC-16 values stay below 2**16, so the per-record CRC allocates nothing on a 32-bit board.
"""


def _table16():
    t = []
    for i in range(256):
        c = i << 8
        for _ in range(8):
            c = ((c << 1) ^ 0x1021) if c & 0x8000 else (c << 1)
        t.append(c & 0xFFFF)
    return tuple(t)


def _table32():
    t = []
    for i in range(256):
        c = i
        for _ in range(8):
            c = (c >> 1) ^ 0xEDB88320 if c & 1 else c >> 1
        t.append(c)
    return tuple(t)


_T16 = _table16()
_T32 = _table32()


def crc16(data, crc=0xFFFF, start=0, end=-1):
    """CRC-16/CCITT-FALSE of data[start:end] (end=-1 means len(data)), continuing from crc."""
    t = _T16
    if end < 0:
        end = len(data)
    for i in range(start, end):
        crc = ((crc << 8) & 0xFF00) ^ t[(crc >> 8) ^ data[i]]
    return crc


def crc32_table(data, crc=0):
    """CRC-32 as zlib.crc32(data, crc): pass the previous result to continue over chunks."""
    t = _T32
    c = crc ^ 0xFFFFFFFF
    for b in data:
        c = (c >> 8) ^ t[(c ^ b) & 0xFF]
    return c ^ 0xFFFFFFFF


try:  # the port's C implementation is ~100x faster (a whole-file checksum must beat the watchdog)
    from binascii import crc32 as _crc32_c

    def crc32(data, crc=0):
        return _crc32_c(data, crc)

except ImportError:
    crc32 = crc32_table
