"""Tests against the real KiCad designs in ../shared/real-designs (skipped where absent)."""
