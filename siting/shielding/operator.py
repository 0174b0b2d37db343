"""Dense thin-sheet operator: layout of panels and edges, assembly and LU factors.

The unknowns are the in-plane magnetisation components of every panel, two per
panel in its tangent basis.  :func:`layout` concatenates the sheets' panels,
edges and edge incidences (the line charge of an edge per unit unknown is
``t (t_j . n_pe)``); :func:`factorise` assembles ``A = I - D_ref K`` in place
(K: unknowns -> in-plane H at the panels' collocation points, see
:mod:`siting.shielding.mesh`; kernels in :mod:`siting.shielding.linecharge`)
and LU-factorises it; :class:`Factor` gives ``A^-1 v``, ``A v`` and ``K v`` from
the factors alone, so K need not be stored next to them.

References
----------
E. Anderson et al., *LAPACK Users' Guide*, 3rd ed., SIAM, 1999 (getrf: A = P L U).
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np
from scipy.linalg import lu_factor, lu_solve
from scipy.linalg.blas import dtrmv
from scipy.sparse import csr_matrix

from siting.shielding.linecharge import tangential_operator


@dataclass(frozen=True, eq=False)
class Layout:
    """All sheets' panels and edges concatenated (see :func:`layout`)."""

    centroids: np.ndarray  # (N, 3)
    samples: np.ndarray  # (N, 3, 3) collocation points
    sample_weights: np.ndarray  # (N, 3)
    t1: np.ndarray
    t2: np.ndarray
    normals: np.ndarray
    panel_sheet: np.ndarray  # (N,)
    starts: np.ndarray  # (E, 3)
    ends: np.ndarray
    edge_sheet: np.ndarray  # (E,)
    edge_ptr: np.ndarray  # (E + 1,)
    inc_col: np.ndarray  # (k,)
    inc_coef: np.ndarray  # (k,)
    charge_map: csr_matrix  # (E, 2N): lambda = charge_map @ x


def layout(sheets) -> Layout:
    """Concatenate the sheets' panels, edges and edge incidences (vectorised)."""
    cen, smp, wts, t1, t2, nrm, psh, st, en, esh, cols, coefs, erows = (
        [] for _ in range(13))
    n_off = 0
    e_off = 0
    for i, sh in enumerate(sheets):
        m = sh.mesh
        cen.append(m.centroids)
        smp.append(m.samples)
        wts.append(m.sample_weights)
        t1.append(m.t1)
        t2.append(m.t2)
        nrm.append(m.normals)
        psh.append(np.full(m.n_faces, i))
        st.append(m.vertices[m.edges[:, 0]])
        en.append(m.vertices[m.edges[:, 1]])
        esh.append(np.full(len(m.edges), i))
        face = m.inc_face
        c1 = sh.thickness * np.einsum("ij,ij->i", m.t1[face], m.inc_normal)
        c2 = sh.thickness * np.einsum("ij,ij->i", m.t2[face], m.inc_normal)
        rows = m.inc_edge + e_off
        erows += [rows, rows]
        cols += [2 * (face + n_off), 2 * (face + n_off) + 1]
        coefs += [c1, c2]
        n_off += m.n_faces
        e_off += len(m.edges)
    erows = np.concatenate(erows)
    cols = np.concatenate(cols)
    coefs = np.concatenate(coefs)
    order = np.argsort(erows, kind="stable")
    ptr = np.zeros(e_off + 1, dtype=np.int64)
    np.cumsum(np.bincount(erows, minlength=e_off), out=ptr[1:])
    cmap = csr_matrix((coefs, (erows, cols)), shape=(e_off, 2 * n_off))
    return Layout(
        np.vstack(cen), np.concatenate(smp), np.concatenate(wts), np.vstack(t1), np.vstack(t2),
        np.vstack(nrm), np.concatenate(psh),
        np.vstack(st), np.vstack(en), np.concatenate(esh), ptr, cols[order], coefs[order], cmap,
    )


@dataclass(frozen=True, eq=False)
class Factor:
    """LU factors of A = I - D_ref K (D_ref block-diagonal 2x2), and products with A and K."""

    lu: np.ndarray
    piv: np.ndarray
    perm: np.ndarray
    d_inv: np.ndarray  # (N, 2, 2) inverse of each panel's reference susceptibility tensor

    def solve(self, rhs):
        return lu_solve((self.lu, self.piv), rhs, check_finite=False)

    def a_dot(self, x):
        y = dtrmv(self.lu, x, lower=0, diag=0)
        y = dtrmv(self.lu, y, lower=1, diag=1)
        return y[self.perm]

    def k_dot(self, x):
        r = (x - self.a_dot(x)).reshape(-1, 2)
        return np.einsum("nij,nj->ni", self.d_inv, r).reshape(-1)


def row_permutation(piv: np.ndarray) -> np.ndarray:
    """Index ``p`` with ``(P w) = w[p]`` for the LAPACK getrf interchanges ``piv``."""
    idx = np.arange(len(piv))
    for i in range(len(piv) - 1, -1, -1):  # A = P L U, P = S_0 S_1 ... S_{n-1}
        j = piv[i]
        if j != i:
            idx[i], idx[j] = idx[j], idx[i]
    return idx


def factorise(lay: Layout, d_ref: np.ndarray, *, block: int = 2048) -> tuple[Factor, dict]:
    """Assemble ``I - D_ref K`` in place and LU-factorise it; returns timings [s].

    ``d_ref`` (N, 2, 2): each panel's reference susceptibility tensor in its
    tangent basis (symmetric positive definite); rows are combined in column
    blocks of ``block`` so the temporary stays small.
    """
    t0 = time.perf_counter()
    a = tangential_operator(lay.samples, lay.t1, lay.t2, lay.starts, lay.ends,
                            lay.edge_ptr, lay.inc_col, lay.inc_coef, 2 * len(lay.centroids),
                            weights=lay.sample_weights)
    for c0 in range(0, a.shape[1], block):  # column blocks: bounded temporaries
        sl = slice(c0, c0 + block)
        r0 = a[0::2, sl].copy()
        r1 = a[1::2, sl]
        a[0::2, sl] = -(d_ref[:, 0, 0, None] * r0 + d_ref[:, 0, 1, None] * r1)
        a[1::2, sl] = -(d_ref[:, 1, 0, None] * r0 + d_ref[:, 1, 1, None] * r1)
    a[np.diag_indices_from(a)] += 1.0
    t1 = time.perf_counter()
    lu, piv = lu_factor(a, overwrite_a=True, check_finite=False)
    t2 = time.perf_counter()
    return Factor(lu, piv, row_permutation(piv), np.linalg.inv(d_ref)), {
        "assembly": t1 - t0, "factorisation": t2 - t1}


def jacobian_tensor(chis, chid, u, floor):
    """Susceptibility tensors (N, 2, 2) ``chis (I - u u^T) + max(chid, floor) u u^T``."""
    cd = np.maximum(chid, floor)
    uu = u[:, :, None] * u[:, None, :]
    eye = np.eye(2)[None]
    return chis[:, None, None] * (eye - uu) + cd[:, None, None] * uu
