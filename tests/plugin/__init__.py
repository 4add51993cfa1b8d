"""Tests of netaudit inside KiCad: board reader, PCB-editor plugin, generator script, package."""
