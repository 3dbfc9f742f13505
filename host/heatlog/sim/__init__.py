"""A virtual heatlog board: the real firmware modules under CPython, driven by a thermal model.

``thermal.py`` holds the vessel model (pure), ``scenarios.py`` the invented experiments,
``fakemachine.py`` the stand-in for MicroPython's ``machine`` module, ``firmware.py`` finds and
imports the firmware, ``board.py`` runs it on a virtual clock behind a pseudo-terminal, ``faults.py`` injects link
faults between a host and the board.
"""
