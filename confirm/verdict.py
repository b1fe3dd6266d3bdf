"""Turn a mixture fit into a verdict a chemist can act on.

The verdict names the major product, gives the E:Z ratio of every alkene pair, the
regioisomer ratio, elimination vs substitution and the starting material left, each with its
uncertainty, and says plainly what the spectrum cannot decide (and which experiment would).
A candidate is only ever claimed when the fit detected it, which requires its diagnostic
signals to be seen (see :mod:`confirm.fitting`).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace

import numpy as np

from predictors.core import Candidate, MixtureFit, RatioEstimate, SpinSystem, Verdict
from predictors.errors import InputError

__all__ = ["decide", "alkene_facts", "AlkeneFacts"]

_ELIMINATION = {"E2", "E1", "E1cB", "Ei"}
_SUBSTITUTION = {"SN2", "SN1", "SN2'", "SN1'"}


@dataclass(frozen=True)
class AlkeneFacts:
    """What the structure says about a candidate's C=C bonds.

    Attributes
    ----------
    n_alkenes : int
        Non-aromatic C=C bonds.
    geometry : str or None
        ``"E"``/``"Z"`` of the first stereogenic C=C, None otherwise.
    vicinal_vinyl_h : bool
        Some stereogenic C=C has an H on both carbons (a 3J cis/trans coupling to read).
    substitution : int
        Largest number of non-H substituents on the C=C carbons (2 = 1,1- or 1,2-, 3 = tri...).
    skeleton : str
        Canonical SMILES without stereochemistry (groups geometric isomers).
    """

    n_alkenes: int
    geometry: str | None
    vicinal_vinyl_h: bool
    substitution: int
    skeleton: str


def alkene_facts(smiles: str) -> AlkeneFacts:
    """Describe the C=C bonds of a SMILES (raises InputError when it does not parse)."""
    from rdkit import Chem

    mol = Chem.MolFromSmiles(smiles)
    if mol is None:
        raise InputError(f"smiles: RDKit cannot parse {smiles!r}")
    Chem.AssignStereochemistry(mol, cleanIt=True, force=True)
    n, geometry, vicinal, subst = 0, None, False, 0
    for bond in mol.GetBonds():
        if bond.GetBondType() != Chem.BondType.DOUBLE or bond.GetIsAromatic():
            continue
        a, b = bond.GetBeginAtom(), bond.GetEndAtom()
        if a.GetSymbol() != "C" or b.GetSymbol() != "C":
            continue
        n += 1
        subst = max(subst, (a.GetDegree() - 1) + (b.GetDegree() - 1))
        stereo = bond.GetStereo()
        if stereo in (Chem.BondStereo.STEREOE, Chem.BondStereo.STEREOTRANS):
            geometry = geometry or "E"
        elif stereo in (Chem.BondStereo.STEREOZ, Chem.BondStereo.STEREOCIS):
            geometry = geometry or "Z"
        if stereo != Chem.BondStereo.STEREONONE and a.GetTotalNumHs() > 0 and b.GetTotalNumHs() > 0:
            vicinal = True
    flat = Chem.Mol(mol)
    Chem.RemoveStereochemistry(flat)
    return AlkeneFacts(
        n_alkenes=n,
        geometry=geometry,
        vicinal_vinyl_h=vicinal,
        substitution=subst,
        skeleton=Chem.MolToSmiles(flat),
    )


#: Two-sided 95 % normal quantile.
_Z_95 = 1.959963984540054


def _share(fit: MixtureFit, num: Sequence[int], den: Sequence[int]) -> tuple[float, float]:
    """Share of ``num`` in num + den among the detected components, and its sd (first-order
    propagation through the fraction covariance)."""
    x = np.array([c.share for c in fit.components])
    a, b = x[list(num)].sum(), x[list(den)].sum()
    if a + b <= 0:
        return 0.0, 0.0
    share = a / (a + b)
    grad = np.zeros(x.size)
    grad[list(num)] = b / (a + b) ** 2
    grad[list(den)] = -a / (a + b) ** 2
    cov = fit.fraction_covariance
    if cov is None:
        sd = np.array([c.mole_fraction_sd for c in fit.components])
        cov = np.diag(sd**2)
    return float(share), float(np.sqrt(max(0.0, grad @ cov @ grad)))


def _ratio(fit: MixtureFit, name: str, num_label: str, den_label: str, num, den, *,
           isomers: bool = False) -> RatioEstimate:
    """The ratio of two groups; a bound, not decided, when a member is only bounded.

    Undetected members may hold up to their 95 % upper bound: with such members only in the
    denominator the share is at least a / (a + b + hidden), only in the numerator at most
    (a + hidden) / (a + hidden + b), in both a range. For geometric ``isomers`` (E against Z,
    whose multiplets nearly coincide) an undetected member whose multiplets all lie under the
    others' lines may hold any part of the signal the fit gave to the other isomer: the spectrum
    does not bound that side of the ratio at all.
    """
    share, sd = _share(fit, num, den)
    x = np.array([c.share for c in fit.components])
    a, b = x[list(num)].sum(), x[list(den)].sum()
    up_num, up_den = _hidden(fit, num), _hidden(fit, den)
    low = a / (a + b + up_den) if up_den > 0 and a + b + up_den > 0 else None
    high = (a + up_num) / (a + up_num + b) if up_num > 0 and a + up_num + b > 0 else None
    if isomers and _hidden(fit, den, under_others=True) > 0:
        low = 0.0  # the whole of the other isomer's signal may be this one's
    if isomers and _hidden(fit, num, under_others=True) > 0:
        high = 1.0
    decided = low is None and high is None and not _undecided_by_bounds(share, sd)
    return RatioEstimate(name=name, numerator=num_label, denominator=den_label, share=share, share_sd=sd,
                         decided=decided, low=low, high=high)


def _hidden(fit: MixtureFit, indices, *, under_others: bool = False) -> float:
    """Sum of the 95 % upper bounds of the undetected members (only of those whose multiplets all
    lie under other components' lines, overlap >= 50 %, with ``under_others``)."""
    def counts(c) -> bool:
        if c.detected:
            return False
        if not under_others:
            return True
        return bool(c.site_evidence) and all(e.overlap >= 0.5 for e in c.site_evidence)

    return float(sum(fit.components[i].upper_limit or 0.0 for i in indices if counts(fit.components[i])))


def _undecided_by_bounds(share: float, sd: float) -> bool:
    """A ratio whose 95 % interval spans more than 20 points is not decided by the spectrum."""
    return 2 * _Z_95 * sd > 0.20


def _name(candidate: Candidate) -> str:
    return candidate.label or candidate.smiles


def _ez_ratios(fit, facts, vinyl_overlapped):
    ratios, unresolved, steps = [], [], []
    groups: dict[str, list[int]] = {}
    for i, f in enumerate(facts):
        if f.geometry:
            groups.setdefault(f.skeleton, []).append(i)
    for members in groups.values():
        e = [i for i in members if facts[i].geometry == "E"]
        z = [i for i in members if facts[i].geometry == "Z"]
        if not e or not z:
            continue
        if not any(fit.components[i].detected for i in members):
            continue
        name = _name(fit.components[e[0]].candidate)
        ratio = _ratio(fit, "E:Z" if len(groups) == 1 else f"E:Z {name}", "E", "Z", e, z, isomers=True)
        decided = ratio.decided
        if ratio.is_bound:
            unresolved.append(f"E/Z of {name}: an isomer not detected may still be present "
                              "up to its upper bound")
            steps.append("a spectrum with higher signal-to-noise (more scans) or at higher field")
        elif not decided:
            unresolved.append(f"E/Z of {name}: the ratio is uncertain by more than 20 points")
            steps.append("a spectrum with higher signal-to-noise (more scans) or at higher field")
        if not all(facts[i].vicinal_vinyl_h for i in members):
            decided = False
            unresolved.append(
                f"E/Z of {name}: trisubstituted alkene without a vicinal vinyl H-H coupling; "
                "the assignment rests on predicted shifts only"
            )
            steps.append("1D NOE (or NOESY) from the vinyl H to the allylic substituents settles E/Z")
            steps.append(
                "13C: the allylic carbon cis to the larger group lies several ppm upfield "
                "(gamma-gauche effect)"
            )
        elif all(vinyl_overlapped[i] for i in members):
            decided = False
            unresolved.append(f"E/Z of {name}: the diagnostic vinyl signals of the isomers overlap")
            steps.append("record the spectrum at higher field (or in C6D6) to separate the vinyl multiplets")
        ratios.append(replace(ratio, decided=decided))
    return ratios, unresolved, steps


def _group_ratio(fit, name, num_label, den_label, num, den):
    if not num or not den or not any(fit.components[i].detected for i in list(num) + list(den)):
        return None
    return _ratio(fit, name, num_label, den_label, num, den)


def _regio_labels(candidates, facts):
    labels = [c.regio for c in candidates]
    if any(labels):
        return labels
    alkenes = [
        i for i, f in enumerate(facts) if f.n_alkenes and "starting material" not in candidates[i].pathways
    ]
    degrees = {facts[i].substitution for i in alkenes}
    if len(degrees) < 2:
        return labels
    top = max(degrees)
    return [
        ("more substituted" if facts[i].substitution == top else "less substituted") if i in alkenes else None
        for i in range(len(candidates))
    ]


#: Spread of the mole fractions over alternative fits about as good as the best (fitting's
#: ``quality["alternative_spread"]``) above which the verdict says the assignment is not settled
#: (confidence at most moderate; twice this: low).
_ALTERNATIVE_UNRESOLVED = 0.05
#: The experiment that settles an assignment another fit almost matches.
_HIGHER_FIELD = "a spectrum at higher field, where the multiplets overlap less"


def _confidence(fit, major, ratios, unresolved) -> str:
    q = fit.quality
    if major is None:
        return "undecided"
    explained = float(q.get("explained_fraction", 1.0))
    unknown = float(q.get("unexplained_share", 0.0))
    spread = float(q.get("alternative_spread", 0.0))
    if explained < 0.6 or unknown > 0.3 or spread > 2 * _ALTERNATIVE_UNRESOLVED:
        return "low"
    if unresolved or explained < 0.85 or unknown > 0.1:
        return "moderate"
    return "high"


#: Label of a candidate that is an internal standard (see confirm.qnmr), not a product.
STANDARD_LABEL = "internal standard"


def decide(
    fit: MixtureFit,
    systems: Sequence[SpinSystem],
    candidates: Sequence[Candidate],
    *,
    context: Mapping | None = None,
) -> Verdict:
    """Decide what the sample contains from a mixture fit.

    Parameters
    ----------
    fit : MixtureFit
        Result of :func:`confirm.fitting.fit_mixture` for ``candidates``.
    systems : sequence of SpinSystem
        Spin systems used in the fit (same order).
    candidates : sequence of Candidate
    context : mapping, optional
        ``{"input": "peak list"}`` notes that amounts came from a peak list.

    Returns
    -------
    Verdict
    """
    candidates = tuple(candidates)
    if len(fit.components) != len(candidates) or len(systems) != len(candidates):
        raise InputError("fit: components, systems and candidates must correspond one to one")
    facts = [alkene_facts(c.smiles) for c in candidates]
    comps = fit.components
    vinyl_overlapped = [
        all(s.overlap >= 0.5 or not s.seen for s in c.site_evidence if "vinyl" in s.label.lower())
        and any("vinyl" in s.label.lower() for s in c.site_evidence)
        for c in comps
    ]
    is_sm = ["starting material" in c.pathways for c in candidates]
    # an internal standard added for the NMR yield is fitted but is no product
    is_standard = [c.label == STANDARD_LABEL for c in candidates]
    products = [i for i in range(len(candidates)) if not (is_sm[i] or is_standard[i])]
    major_i = max(
        (i for i in products if comps[i].detected), key=lambda i: comps[i].mole_fraction, default=None
    )
    ratios, unresolved, steps = _ez_ratios(fit, facts, vinyl_overlapped)
    regio = _regio_labels(candidates, facts)
    more = [i for i in products if regio[i] == "more substituted"]
    less = [i for i in products if regio[i] == "less substituted"]
    extra = [
        _group_ratio(fit, "regioisomers", "more substituted", "less substituted", more, less),
        _group_ratio(
            fit,
            "elimination:substitution",
            "elimination",
            "substitution",
            [i for i in products if _ELIMINATION & set(candidates[i].pathways)],
            [i for i in products if _SUBSTITUTION & set(candidates[i].pathways)],
        ),
        _group_ratio(
            fit,
            "starting material left",
            "starting material",
            "products",
            [i for i in range(len(candidates)) if is_sm[i]],
            products,
        ),
    ]
    ratios += [r for r in extra if r is not None]
    tied = _tied_with_major(comps, products, major_i)
    if tied:
        unresolved.append(f"the major product: {_shares_text(comps, [major_i, *tied])} are equal within "
                          "their uncertainties")
        steps.append(_HIGHER_FIELD)
    alike = _lookalikes(comps, major_i)
    if alike:
        others = " or ".join(_name(comps[i].candidate) for i in alike)
        unresolved.append(
            f"the major product: {_name(comps[major_i].candidate)} and {others}"
            + " give the same multiplets and couplings where they were fitted, and their predicted shifts"
            " differ by less than their uncertainty: this spectrum cannot tell them apart")
        steps.append(_TELL_APART)
    for i, c in enumerate(comps):
        twins = _lookalikes(comps, i) if c.detected and i != major_i else []
        if twins:
            unresolved.append(f"{_name(c.candidate)} could as well be "
                              + " or ".join(_name(comps[j].candidate) for j in twins)
                              + ": their spectra are alike within the predictions' uncertainty")
    major = comps[major_i].candidate.smiles if major_i is not None and not tied and not alike else None
    rivals = _rival_majors(fit, products, major_i)
    if rivals:
        unresolved.append(
            "the major product: an assignment of the multiplets that fits almost as well makes "
            + " or ".join(_name(comps[i].candidate) for i in rivals)
            + " the major product"
        )
        steps.append(_HIGHER_FIELD)
    spread = float(fit.quality.get("alternative_spread", 0.0))
    if spread > _ALTERNATIVE_UNRESOLVED:
        unresolved.append(
            "another assignment of the multiplets fits the spectrum almost as well and moves the "
            f"mole fractions by up to {100 * spread:.0f} points"
        )
        steps.append(_HIGHER_FIELD)
    confidence = ("undecided" if tied or alike else "low" if rivals
                  else _confidence(fit, major, ratios, unresolved))
    evidence = _verdict_evidence(fit, major_i)
    if fit.unexplained_ppm:
        unresolved.append(
            "signals no candidate explains at "
            + ", ".join(f"{p:.2f}" for p in fit.unexplained_ppm)
            + " ppm (unknown components)"
        )
        steps.append("identify the unknown signals (2D COSY/HSQC) or add the missing candidate")
    if context and context.get("input") == "peak list":
        unresolved.append("amounts come from a peak list (no line shapes): uncertainties are wider")
    summary = _summary(comps, major_i, ratios, confidence, facts, tied, alike)
    identified = tuple(c.candidate.smiles for c in comps if c.detected)
    return Verdict(
        summary=summary,
        confidence=confidence,
        major=major,
        identified=identified,
        ratios=tuple(ratios),
        evidence=evidence,
        unresolved=tuple(dict.fromkeys(unresolved)),
        next_steps=tuple(dict.fromkeys(steps)),
    )


def _rival_majors(fit, products, major_i) -> list[int]:
    """Detected products that are the largest in one of the fit's alternative fits (other
    assignments of the multiplets that explain the spectrum about as well)."""
    if major_i is None:
        return []
    detected = [i for i in products if fit.components[i].detected]
    rivals = {max(detected, key=lambda i: row[i]) for row in fit.alternative_fractions}
    return sorted(rivals - {major_i})


def _verdict_evidence(fit, major_i) -> tuple[str, ...]:
    if major_i is None:
        return ()
    comp = fit.components[major_i]
    seen = [e for e in comp.evidence if " observed at " in e]
    return tuple(f"{_name(comp.candidate)}: {e}" for e in seen[:4])


#: Two detected products whose shares differ by less than this many sd of the difference (the two
#: sds in quadrature) are equally likely to be the larger: the verdict names neither.
_TIE_SD = 2.0


#: The step that tells look-alike candidates apart.  # common practice
_TELL_APART = ("compare with an authentic sample of each candidate, or record a 13C or 2D (HSQC, HMBC) "
               "spectrum")


def _lookalikes(comps, k) -> list[int]:
    """Indexes of the candidates the spectrum cannot tell from component ``k`` (see
    :mod:`confirm.fitting.lookalikes`); none when ``k`` is None."""
    if k is None or not comps[k].lookalikes:
        return []
    return [i for i, c in enumerate(comps) if c.candidate.smiles in comps[k].lookalikes]


def _tied_with_major(comps, products, major_i) -> list[int]:
    """Detected products whose share is not told from the largest one's (:data:`_TIE_SD`)."""
    if major_i is None:
        return []
    top = comps[major_i]
    return [i for i in products if i != major_i and comps[i].detected
            and top.mole_fraction - comps[i].mole_fraction
            < _TIE_SD * float(np.hypot(top.mole_fraction_sd, comps[i].mole_fraction_sd))]


def _shares_text(comps, indices) -> str:
    """``A (x +- s mol %) and B (...)`` for the components at ``indices``."""
    return " and ".join(f"{_name(comps[i].candidate)} ({100 * comps[i].mole_fraction:.1f} +- "
                        f"{100 * comps[i].mole_fraction_sd:.1f} mol %)" for i in indices)


def _summary(comps, major_i, ratios, confidence, facts, tied=(), alike=()) -> str:
    if major_i is not None and alike:
        top = comps[major_i]
        return " ".join([f"The major product is not decided by this spectrum: {_name(top.candidate)} "
                         f"({100 * top.mole_fraction:.1f} +- {100 * top.mole_fraction_sd:.1f} mol %) "
                         "cannot be told from " + " or ".join(_name(comps[i].candidate) for i in alike)
                         + " (the same multiplets, their shifts within the predictions' uncertainty).",
                         *_ratio_parts(ratios, confidence)])
    if major_i is not None and tied:
        return " ".join([f"The major product is not decided by this spectrum: "
                         f"{_shares_text(comps, [major_i, *tied])} are equal within their uncertainties.",
                         *_ratio_parts(ratios, confidence)])
    if major_i is None:
        if any(c.detected for c in comps):
            names = ", ".join(_name(c.candidate) for c in comps if c.detected)
            return f"No product detected; only {names} is seen."
        return "None of the candidates is clearly present: the spectrum does not support any of them."
    major = comps[major_i]
    kind = "alkene" if facts[major_i].n_alkenes else "product"
    hidden = sum(c.upper_limit if c.upper_limit is not None else c.detection_limit
                 for c in comps if not c.detected and c.candidate.label != STANDARD_LABEL)
    note = (f"; candidates not detected could together hold up to {100 * hidden:.1f} %"
            if hidden >= 0.01 else "")
    parts = [
        f"Major {kind}: {_name(major.candidate)} ({100 * major.mole_fraction:.1f} +- "
        f"{100 * major.mole_fraction_sd:.1f} mol % of the detected components{note})."
    ]
    return " ".join(parts + _ratio_parts(ratios, confidence))


def _ratio_parts(ratios, confidence) -> list[str]:
    """The summary's sentences on the ratios and the confidence."""
    parts = []
    for r in ratios:
        tag = "" if r.decided else ", not decided by this spectrum"
        spread = "" if r.is_bound else f" (+- {100 * r.share_sd:.1f} points)"
        parts.append(f"{r.name} {r.ratio_text}{spread}{tag}.")
    parts.append(f"Confidence: {confidence}.")
    return parts
