"""Exact simulation of 1H spin systems and rendering of their line shapes.

The Hamiltonian (in Hz, rotating frame at 0 ppm) is

    H = sum_g nu_g Fz_g + sum_{g<h} J_gh F_g . F_h

where each *site* g is a group of ``n_g`` magnetically equivalent protons with
total-spin operators F_g. Equivalent groups are handled as composite spins:
the group's states split into total spin values I_g (with multiplicities from
the coupling of ``n_g`` spins 1/2); couplings inside a group do not show in the
spectrum and are not needed. The Hamiltonian commutes with the total Fz, so it
is diagonalised block by block (one block per total M). Lines are the
transitions between adjacent blocks, intensity ``|<lower|F-|upper>|^2``.

Large molecules are split into clusters (see :func:`plan_clusters`): sites
joined by strong couplings (``|J| > cluster_ratio * |delta nu|``, or a
coupling that changes how a strongly coupled pair mixes) are simulated
exactly, and weak couplings still join clusters while these stay cheap.
Couplings between clusters enter per eigenstate of the neighbouring clusters,
to second order in ``J / delta nu`` (shifts, an ``Fz**2`` term, couplings
induced inside the cluster and an intensity factor): for the largest
affordable set of neighbours the cluster is re-diagonalised for every
neighbour state at once (stacked ``eigh``; the way an ABX system's AB part is
two AB quartets), and any remaining neighbours split each line first order by
the line's change of ``<Fz>``. If a cluster would exceed ``max_cluster_spins``
protons, its weakest strong couplings are cut; this is reported in
:attr:`LineList.warnings`.

:func:`simulate_with_derivatives` also gives the derivative of every line
frequency by chosen couplings and by every site frequency (Hellmann-Feynman
inside clusters, exact derivatives of the terms across cuts), for fits that
refine shifts and couplings. The simulation runs OpenBLAS on one thread (many
small blocks; threads only contend for the cores).

Modules, one job each: ``clusters`` (how the system is cut), ``_basis``
(composite-spin blocks), ``_eigen`` (eigenstates, lines, expectation values),
``_neighbours`` (what cut neighbours do to a cluster), ``_cluster`` (one
cluster's lines), ``_lines`` (pooling, merging, pruning), ``_run`` (one
simulation), ``simulate`` (public entry points), ``render`` (line shapes),
``units`` (which sites are simulated proton by proton), ``hetero`` (couplings to 19F and 31P:
one simulation per X spin state, or first-order splits), ``_checks`` and ``_blas``.
"""

from __future__ import annotations

from predictors.spin._blas import one_blas_thread
from predictors.spin._checks import FIELD_RANGE_MHZ
from predictors.spin.clusters import ClusterPlan, plan_clusters
from predictors.spin.hetero import XPlan, plan_x, pool_state_lines, split_by_x, split_lines_by_x, x_patterns
from predictors.spin.render import LINE_SHAPES, model_spectrum, render_lines, render_sites
from predictors.spin.simulate import (
    LineDerivatives,
    simulate_arrays,
    simulate_arrays_reusing,
    simulate_lines,
    simulate_with_derivatives,
)
from predictors.spin.units import SpinUnits, spin_units

__all__ = [
    "FIELD_RANGE_MHZ",
    "ClusterPlan",
    "LINE_SHAPES",
    "LineDerivatives",
    "model_spectrum",
    "one_blas_thread",
    "plan_clusters",
    "render_lines",
    "render_sites",
    "simulate_arrays",
    "simulate_arrays_reusing",
    "simulate_lines",
    "simulate_with_derivatives",
    "spin_units",
    "SpinUnits",
    "split_by_x",
    "XPlan",
    "plan_x",
    "pool_state_lines",
    "split_lines_by_x",
    "x_patterns",
]
