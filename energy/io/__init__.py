"""Readers and writers of structure and parameter files.

Each loader lives in its own module (e.g. :mod:`energy.io.psf`, :mod:`energy.io.charmm_params`,
:mod:`energy.io.charmm_system`) and turns files into a :class:`energy.model.system.MolecularSystem`.
"""
