"""Reporters: each formats an Audit; none computes anything."""
