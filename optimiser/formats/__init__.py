"""Edges: unit strings and SI floats, the strict schema base, the one YAML reader, atomic writes.

Nothing here knows about valves or transformers; every other layer may use it.
"""
