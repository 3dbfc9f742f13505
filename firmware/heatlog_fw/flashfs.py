"""The few file-system calls the log store makes, on the board's own VFS (littlefs or FAT).

Tests pass a fake with the same methods to simulate power cuts; nothing else touches files.
"""

import os

_ENOENT = 2


class FlashFs:
    def open(self, path, mode):
        return open(path, mode)

    def listdir(self, path):
        return os.listdir(path)

    def size(self, path):
        """File size in bytes, or -1 if it does not exist."""
        try:
            return os.stat(path)[6]
        except OSError as e:
            if e.args and e.args[0] == _ENOENT:
                return -1
            raise

    def rename(self, old, new):
        os.rename(old, new)

    def remove(self, path):
        os.remove(path)

    def mkdir(self, path):
        try:
            os.mkdir(path)
        except OSError:
            pass

    def space(self, path):
        """(free bytes, total bytes) of the volume holding path. Slow on littlefs: not per sample."""
        st = os.statvfs(path)
        return st[0] * st[4], st[0] * st[2]
