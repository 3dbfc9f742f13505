# The unix port dressed as a board (tests/firmware/unixboard.py starts it on a pty).
# The file IMAGE is the board's flash: a littlefs v2 volume (formatted on first use) mounted at
# "/", so files land on littlefs as on a Pico; /lib/machine.py is the fake `machine` (copied from
# MACHINE_PY: the unix port has none). main.py runs at every start as on a board; when it returns
# (or there is none) the REPL follows (-i).
# Usage: micropython -i tests/firmware/unix/boot_shim.py IMAGE MACHINE_PY
import os
import sys

import vfs

_BLOCK = 4096
_N_BLOCKS = 352  # 1408 KiB, a Pico's volume


class _FileFlash:
    def __init__(self, path):
        self.f = open(path, "r+b")  # noqa: SIM115 - open for the device's life

    def readblocks(self, block, buf, off=0):
        self.f.seek(block * _BLOCK + off)
        self.f.readinto(buf)

    def writeblocks(self, block, buf, off=0):
        self.f.seek(block * _BLOCK + off)
        self.f.write(buf)
        self.f.flush()

    def ioctl(self, op, arg):
        if op == 4:
            return _N_BLOCKS
        if op == 5:
            return _BLOCK
        if op == 6:
            self.f.seek(arg * _BLOCK)
            self.f.write(b"\xff" * _BLOCK)
            self.f.flush()
        return 0


def _mount():
    image, machine_py = sys.argv[1], sys.argv[2]
    with open(machine_py) as f:
        fake = f.read()
    fresh = False
    try:
        os.stat(image)
    except OSError:
        with open(image, "wb") as f:
            for _ in range(_N_BLOCKS):
                f.write(b"\xff" * _BLOCK)
        fresh = True
    dev = _FileFlash(image)
    if fresh:
        vfs.VfsLfs2.mkfs(dev, progsize=256)
    vfs.umount("/")
    vfs.mount(vfs.VfsLfs2(dev, progsize=256), "/")
    os.chdir("/")
    try:
        os.mkdir("/lib")
    except OSError:
        pass
    with open("/lib/machine.py", "w") as f:
        f.write(fake)
    sys.path[:] = ["", "/lib"]


_mount()
try:
    os.stat("/main.py")
    _main = True
except OSError:
    _main = False
if _main:
    del _main
    with open("/main.py") as _f:
        _src = _f.read()
    exec(_src, {"__name__": "__main__"})
