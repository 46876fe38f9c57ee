"""Presentation of findings: terminal table, JSON (check output format 1)."""
