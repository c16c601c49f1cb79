"""Tessera's two front ends: the command line (:mod:`app.cli`) and the desktop window
(:mod:`app.gui`).  Both call the library :mod:`energy`; neither does energy arithmetic."""
