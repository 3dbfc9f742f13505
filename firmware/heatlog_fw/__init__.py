"""heatlog board firmware: sensors, log store, command protocol. Imports under CPython too."""

FIRMWARE_VERSION = "0.1.0"
