"""Probe physics: resistance–temperature curves, reading chains, calibration fits, design, files."""
