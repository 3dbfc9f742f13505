"""pyserial's ``socket://`` port with an honest ``in_waiting``.

pyserial's socket port reports at most one waiting byte, so a reader that asks for what is
waiting (as :class:`heatlog.device.link.Link` does) gets one byte per call. This subclass
peeks at the socket (``MSG_PEEK``, on every system) and reports all of it. The simulator's
TCP server (``heatlog sim --tcp``) is the main user; any other socket:// board benefits too.
"""

from __future__ import annotations

import select
import socket
from typing import Any

from serial.urlhandler.protocol_socket import Serial as _SocketSerial


class SocketSerial(_SocketSerial):
    @property
    def in_waiting(self) -> int:
        sock: Any = self._socket
        if sock is None:
            return 0
        ready, _, _ = select.select([sock], [], [], 0)
        if not ready:
            return 0
        try:
            peek = sock.recv(65536, socket.MSG_PEEK)
        except (BlockingIOError, InterruptedError):
            return 0
        except OSError:
            return 1  # let read() report the failure
        return max(len(peek), 1)  # b"": the peer closed; read() says so

    def open(self) -> None:
        super().open()
        sock: Any = self._socket
        try:  # small request frames go out at once (no Nagle delay waiting for an ACK)
            sock.setsockopt(socket.IPPROTO_TCP, socket.TCP_NODELAY, 1)
        except OSError:
            pass

    def close(self) -> None:
        """Close without pyserial's fixed 0.3 s pause (the simulator takes a new host at once)."""
        me: Any = self
        if me.is_open:
            if me._socket is not None:
                try:
                    me._socket.shutdown(socket.SHUT_RDWR)
                except OSError:
                    pass
                try:
                    me._socket.close()
                except OSError:
                    pass
                me._socket = None
            me.is_open = False
