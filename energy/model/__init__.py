"""The engine's data model (:class:`MolecularSystem`, :class:`Frame`) and its settings."""
