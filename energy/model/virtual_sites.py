"""Virtual sites (massless interaction sites such as the M site of 4-site water), struct of arrays.

Every site is placed from up to three parent atoms in every frame, before any nonbonded term
(docs/physics.md, "Virtual sites").  Two forms cover OpenMM's four site classes:

* ``linear`` (two- and three-particle averages, out-of-plane):
  ``x = w0 p0 + w1 p1 + w2 p2 + wc (p1 - p0) x (p2 - p0)``;
* ``local`` (local-coordinate sites): origin ``o = sum(wo p)``, directions ``dx = sum(wx p)``,
  ``dy = sum(wy p)``, ``dz = dx x dy``, then ``dx``, ``dz`` normalised and ``dy = dz x dx``;
  ``x = o + l0 dx + l1 dy + l2 dz`` with the local position ``l`` in A.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np


def _frozen(value, dtype, shape):
    arr = np.ascontiguousarray(value, dtype=dtype).reshape(shape)
    arr.flags.writeable = False
    return arr


@dataclass(frozen=True)
class VirtualSites:
    """The virtual sites of a system; every array has one row per site.

    ``site`` (m,) intp: the site's atom index.  ``parents`` (m, 3) intp: parent atoms (unused
    slots repeat the first parent with zero weights).  ``local`` (m,) bool: the local-coordinate
    form.  ``weights`` (m, 3) float64 (linear form, or the origin weights of the local form),
    ``cross`` (m,) float64 (linear form's cross-product weight, 1/A), ``x_weights``, ``y_weights``
    (m, 3) float64 and ``local_position`` (m, 3) float64 A (local form).
    """

    site: np.ndarray
    parents: np.ndarray
    local: np.ndarray
    weights: np.ndarray
    cross: np.ndarray
    x_weights: np.ndarray
    y_weights: np.ndarray
    local_position: np.ndarray

    def __post_init__(self):
        m = len(np.asarray(self.site).reshape(-1))
        for name, dtype, shape in (("site", np.intp, (m,)), ("parents", np.intp, (m, 3)),
                                   ("local", bool, (m,)), ("weights", np.float64, (m, 3)),
                                   ("cross", np.float64, (m,)), ("x_weights", np.float64, (m, 3)),
                                   ("y_weights", np.float64, (m, 3)),
                                   ("local_position", np.float64, (m, 3))):
            object.__setattr__(self, name, _frozen(getattr(self, name), dtype, shape))

    def __len__(self) -> int:
        return len(self.site)

    def place(self, positions) -> np.ndarray:
        """Positions with every site placed from its parents.

        Parameters
        ----------
        positions : (n_atoms, 3) float64 array, A
            Coordinates; the sites' own rows are ignored.

        Returns
        -------
        (n_atoms, 3) float64 array, A
            A copy with the sites' rows replaced (the input itself when there are no sites).
        """
        if not len(self):
            return positions
        x = np.array(positions, dtype=np.float64)
        p = x[self.parents]  # (m, 3 parents, 3)
        out = np.einsum("mk,mkd->md", self.weights, p)
        lin = ~self.local
        if lin.any():
            cross = np.cross(p[lin, 1] - p[lin, 0], p[lin, 2] - p[lin, 0])
            out[lin] += self.cross[lin, None] * cross
        if self.local.any():
            loc = self.local
            dx = np.einsum("mk,mkd->md", self.x_weights[loc], p[loc])
            dy = np.einsum("mk,mkd->md", self.y_weights[loc], p[loc])
            dz = np.cross(dx, dy)
            dx /= np.linalg.norm(dx, axis=1)[:, None]
            dz /= np.linalg.norm(dz, axis=1)[:, None]
            dy = np.cross(dz, dx)
            lp = self.local_position[loc]
            out[loc] += lp[:, :1] * dx + lp[:, 1:2] * dy + lp[:, 2:] * dz
        x[self.site] = out
        return x


def placed_frame(system, frame):
    """``frame`` with the virtual sites of ``system`` placed from their parents.

    Parameters
    ----------
    system : MolecularSystem
        Its ``virtual_sites`` (None or empty: ``frame`` is returned as it is).
    frame : Frame
        Coordinates (A) of every atom, sites included (their rows are replaced).

    Returns
    -------
    Frame
        The same frame, or a copy with the sites' positions computed.
    """
    sites = getattr(system, "virtual_sites", None)
    if sites is None or not len(sites) or frame.positions.shape[0] != system.n_atoms:
        return frame
    from dataclasses import replace
    return replace(frame, positions=sites.place(frame.positions))
