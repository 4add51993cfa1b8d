"""KiCad schematic files read without KiCad: parsing, hierarchy, connectivity, net names.

The entry point is :func:`netaudit.readers.kicad_schematic.read`; the modules here are
its parts: ``sheetfile`` (one ``.kicad_sch`` into plain records),
``hierarchy`` (sheet instances and references), ``connect`` (what touches what on a sheet),
``nets`` (KiCad's net names), ``buses`` (bus labels, members, aliases) and ``parts``.
"""
