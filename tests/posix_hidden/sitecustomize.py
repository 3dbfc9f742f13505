"""Hide the POSIX-only modules (termios, tty, fcntl, pty), as on Windows, for every Python
process started with this folder on PYTHONPATH and HEATLOG_HIDE_POSIX=1 (children inherit both).

pyserial is imported first: it picks its platform backend at import (serialwin32 on Windows,
serialposix here), which is not heatlog's code. After that any ``import termios`` (``tty``,
``fcntl``, ``pty``) raises ImportError, so heatlog code reaching for one fails as it would on
Windows. Used by tests/test_portability.py.
"""

import os
import sys

HIDDEN = ("termios", "tty", "fcntl", "pty")

if os.environ.get("HEATLOG_HIDE_POSIX") == "1":
    try:
        import serial  # noqa: F401
        import serial.tools.list_ports  # noqa: F401
    except ImportError:
        pass
    for name in HIDDEN:
        sys.modules[name] = None  # type: ignore[assignment]
