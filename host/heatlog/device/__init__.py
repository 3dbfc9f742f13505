"""The host side of the board link: frame codec (``framing``), the link primitives (``link``),
board commands (``commands``), pull and erase (``pull``), the archive (``archive``), CSV export
with probe calibration (``export``) and live readings (``live``)."""
