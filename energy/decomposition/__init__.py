"""One evaluation of every term and its decomposition: the pipeline, the sparse residue-pair
tables, the attribution rule for bonded terms, and atom-pair energies of one residue pair."""
