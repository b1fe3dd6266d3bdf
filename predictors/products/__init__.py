"""Enumerate every elimination and substitution product a substrate can give.

For each leaving group the enumerator builds products by editing a copy of
the substrate (explicit hydrogens, atoms tracked by their original index):

* **E2**: each distinct beta-H; its alkene geometry comes from the
  anti-periplanar conformer (:mod:`predictors.antiperiplanar`) when the
  substrate's configuration is defined, otherwise both geometries are listed.
  Syn elimination appears only as a noted minor path.
* **E1 / SN1**: the carbocation, its 1,2-hydride and 1,2-alkyl shifts to more
  stable cations, and the alkenes and substitution products of each cation.
* **E1cB**: the conjugated alkene (E and Z) and the deconjugated isomer.
* **SN2** with inversion; solvolysis by a nucleophilic solvent.
* The starting material as a component.

Products are deduplicated by canonical SMILES and keep every pathway tag.
Priors are soft shares from the rules of thumb in ``shared/references.md``
section 8 (common practice); each candidate has a one-line rationale.

Modules, one job each: ``_records`` (the records passed between stages), ``_editing`` (edits
of a tagged copy of the substrate), ``_shares`` (pathway shares), ``_e2`` (anti E2 from 3D
conformers), ``_e1cb``, ``_substitution`` (SN2), ``_cations`` (E1/SN1 with shifts) and
``_assembly`` (merging, ranking, :func:`enumerate_products`), ``_geometry`` (the 3D model of a
site and the periplanar conformer of each beta-H), ``_ei`` (syn eliminations), ``_allylic``
(SN2'/SN1'), ``_double`` (second eliminations and 1,4-eliminations) and ``_selftest`` (each
reagent row's example and negative example).
"""

from predictors.products._assembly import enumerate_products
from predictors.products._records import BetaHydrogenReport, ProductSet
from predictors.products._selftest import check_reagent_examples

__all__ = ["BetaHydrogenReport", "ProductSet", "check_reagent_examples", "enumerate_products"]
