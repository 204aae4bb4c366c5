"""Degrees of freedom and structural singularity of the square system.

Before any solve the equation rows (unit residuals and specifications) are
matched to the variables on the Jacobian's sparsity pattern (a maximum
bipartite matching, the basis of the Dulmage–Mendelsohn decomposition;
scipy.sparse.csgraph.maximum_bipartite_matching). Unmatched rows are
over-determined, unmatched variables under-determined; both are named.
"""

from __future__ import annotations

from dataclasses import dataclass

import casadi as ca
import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import maximum_bipartite_matching

from plantopt.assembly import ROW_RESIDUAL, ROW_SPEC, Assembly


@dataclass
class StructureReport:
    """Result of the structural check.

    Attributes
    ----------
    n_variables, n_equations : int
    dof : int
        Variables minus equations (0 for a well-posed simulation).
    unmatched_equations : list of str
        Equations no variable can be assigned to (over-determined part).
    unmatched_variables : list of str
        Variables no equation determines (under-determined part).
    """

    n_variables: int
    n_equations: int
    dof: int
    unmatched_equations: list[str]
    unmatched_variables: list[str]

    @property
    def ok(self) -> bool:
        return self.dof == 0 and not self.unmatched_equations and not self.unmatched_variables

    def lines(self) -> list[str]:
        out = [f"{self.n_variables} variables, {self.n_equations} equations, degrees of freedom {self.dof}"]
        for e in self.unmatched_equations[:20]:
            out.append(f"over-determined: equation {e}")
        for v in self.unmatched_variables[:20]:
            out.append(f"under-determined: variable {v}")
        extra = len(self.unmatched_equations) + len(self.unmatched_variables) - 40
        if extra > 0:
            out.append(f"... and {extra} more")
        return out


def check_structure(asm: Assembly) -> StructureReport:
    """Match equations to variables on the Jacobian pattern of the square system."""
    eq = [i for i, r in enumerate(asm.rows) if r.type in (ROW_RESIDUAL, ROW_SPEC)]
    m, n = len(eq), asm.nlp["x"].shape[0]
    # only the pattern is needed: sparsity propagation is linear in the graph,
    # whereas building the Jacobian itself costs a colouring and AD sweeps
    spj = ca.jacobian_sparsity(asm.nlp["g"], asm.nlp["x"])
    rows, cols = spj.get_triplet()
    A = sp.csr_matrix((np.ones(len(rows)), (np.array(rows, dtype=int), np.array(cols, dtype=int))),
                      shape=(len(asm.rows), n))[np.array(eq, dtype=int)] if m else sp.csr_matrix((0, n))
    match_rows = maximum_bipartite_matching(A, perm_type="column") if m and n else np.full(m, -1)
    matched_cols = set(int(c) for c in match_rows if c >= 0)
    un_eq = [asm.rows[eq[i]].name for i in range(m) if match_rows[i] < 0]
    un_var = [asm.slots[j].path for j in range(n) if j not in matched_cols]
    return StructureReport(n, m, n - m, un_eq, un_var)
