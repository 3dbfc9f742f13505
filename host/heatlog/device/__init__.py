"""Talking to a board: framing, link, pull."""
