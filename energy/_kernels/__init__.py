"""Compiled and array kernels behind the engine (private: their signatures may change).

The cell search, CSR residue-pair rows, the residue layout, the nonbonded row kernel, periodic
cells, bonded geometry, the residue-pair key, and the warm-up that loads the compiled code.
"""
