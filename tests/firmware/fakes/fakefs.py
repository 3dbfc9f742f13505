"""A file system that can lose power at any byte (for the log-store tests; CPython and MicroPython).

Each file has a durable image (what survives a power cut: the content at the last flush or close,
as littlefs guarantees) and a live image. `budget` counts bytes still allowed to be written across
all files; the write that exceeds it stores only the bytes that fit and raises PowerCut.
`crashed(torn)` returns the file system after the cut: durable images, plus, for a FAT-like
medium, the first `torn` unflushed bytes of each file (a torn partial write).
"""


class PowerCut(BaseException):
    """Not an OSError: firmware code must not be able to catch it."""


class _Node:
    def __init__(self):
        self.durable = b""
        self.live = bytearray()


class FakeFile:
    def __init__(self, fs, node, text, append):
        self.fs = fs
        self.node = node
        self.text = text
        self.pos = len(node.live) if append else 0
        self.closed = False

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    def write(self, data):
        if isinstance(data, str):
            data = data.encode()
        data = bytes(data)
        room = self.fs.total - self.fs.used()
        n = len(data)
        cut = False
        full = False
        if self.fs.budget is not None and n > self.fs.budget:
            n = self.fs.budget
            cut = True
        if n > room:
            n = room
            full = True
            cut = False
        live = self.node.live
        live[self.pos : self.pos + n] = data[:n]
        self.pos += n
        if self.fs.budget is not None:
            self.fs.budget -= n
        if cut:
            raise PowerCut()
        if full:
            raise OSError(28, "ENOSPC")
        return n

    def flush(self):
        self.node.durable = bytes(self.node.live)

    def close(self):
        if not self.closed:
            self.flush()
            self.closed = True

    def read(self, n=-1):
        live = self.node.live
        end = len(live) if n is None or n < 0 else min(len(live), self.pos + n)
        out = bytes(live[self.pos : end])
        self.pos = end
        return out.decode() if self.text else out

    def readinto(self, buf):
        data = self.read(len(buf))
        buf[: len(data)] = data
        return len(data)

    def seek(self, pos, whence=0):
        self.pos = pos if whence == 0 else len(self.node.live) + pos
        return self.pos


class FakeFs:
    def __init__(self, total=1 << 20, budget=None):
        self.nodes = {}
        self.dirs = set()
        self.total = total
        self.budget = budget

    def used(self):
        return sum(len(n.live) for n in self.nodes.values())

    def open(self, path, mode):
        text = "b" not in mode
        if "r" in mode:
            if path not in self.nodes:
                raise OSError(2, "ENOENT")
            return FakeFile(self, self.nodes[path], text, False)
        node = self.nodes.get(path)
        if node is None or "w" in mode:
            node = _Node()  # creation is committed at open (littlefs commits the entry)
            self.nodes[path] = node
        return FakeFile(self, node, text, "a" in mode)

    def listdir(self, path):
        pre = path + "/"
        return [p[len(pre) :] for p in self.nodes if p.startswith(pre) and "/" not in p[len(pre) :]]

    def size(self, path):
        node = self.nodes.get(path)
        return -1 if node is None else len(node.live)

    def rename(self, old, new):
        if old not in self.nodes:
            raise OSError(2, "ENOENT")
        self.nodes[new] = self.nodes.pop(old)

    def remove(self, path):
        if path not in self.nodes:
            raise OSError(2, "ENOENT")
        del self.nodes[path]

    def mkdir(self, path):
        self.dirs.add(path)

    def space(self, path):
        return self.total - self.used(), self.total

    def durable_size(self, path):
        node = self.nodes.get(path)
        return -1 if node is None else len(node.durable)

    def crashed(self, torn=0):
        """The file system as found after the power cut."""
        fs = FakeFs(self.total)
        fs.dirs = set(self.dirs)
        for path, node in self.nodes.items():
            new = _Node()
            data = node.durable
            extra = bytes(node.live[len(data) :]) if node.live[: len(data)] == data else b""
            data += extra[:torn]
            new.durable = data
            new.live = bytearray(data)
            fs.nodes[path] = new
        return fs
