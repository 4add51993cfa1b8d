"""Topology: rails, bus lines, buses and segments worked out from a Design."""
