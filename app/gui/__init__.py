"""Tessera's desktop window: thin Qt views over the models of :mod:`energy`.

Nothing in here does energy arithmetic; the computation runs in :mod:`energy` inside background
jobs (:mod:`app.gui.jobs`).  Every view reads and writes one shared
:class:`app.gui.selection.SelectionModel`.
"""
