"""Validation of the core dataclasses."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from predictors import (
    Candidate,
    ComponentFit,
    InputError,
    LineList,
    MixtureFit,
    ProtonSite,
    RatioEstimate,
    Spectrum,
    SpinSystem,
    Verdict,
    canonical_smiles,
)


def _site(atoms, shift=5.0, sd=0.1):
    return ProtonSite(atoms=atoms, shift_ppm=shift, shift_sd_ppm=sd)


def test_canonical_smiles_is_rdkit_canonical():
    assert canonical_smiles("C(C)=C") == canonical_smiles("CC=C") == "C=CC"
    assert canonical_smiles("C/C=C/C") == "C/C=C/C"


def test_canonical_smiles_rejects_garbage():
    with pytest.raises(InputError, match="cannot parse"):
        canonical_smiles("C1CC")
    with pytest.raises(InputError):
        canonical_smiles("")


def test_candidate_canonicalises_and_is_frozen():
    cand = Candidate(smiles="C(C)=C", pathways=["E2"], prior=0.7)
    assert cand.smiles == "C=CC"
    assert cand.pathways == ("E2",)
    with pytest.raises(dataclasses.FrozenInstanceError):
        cand.prior = 0.1


@pytest.mark.parametrize(
    "kwargs, message",
    [
        ({"pathways": ["E3"]}, "unknown tag"),
        ({"pathways": []}, "at least one"),
        ({"prior": 1.5}, "prior"),
        ({"prior": float("nan")}, "prior"),
        ({"geometry": "cis"}, "geometry"),
    ],
)
def test_candidate_rejects_bad_fields(kwargs, message):
    base = {"smiles": "C=C", "pathways": ["E2"]}
    base.update(kwargs)
    with pytest.raises(InputError, match=message):
        Candidate(**base)


def test_proton_site_checks():
    assert _site((3, 4)).n_h == 2
    with pytest.raises(InputError):
        _site(())
    with pytest.raises(InputError):
        _site((1, 1))
    with pytest.raises(InputError, match="shift_sd_ppm"):
        _site((1,), sd=0.0)
    with pytest.raises(InputError, match="shift_ppm"):
        _site((1,), shift=float("nan"))


def test_spin_system_validates_and_freezes_matrix():
    j = np.array([[0.0, 7.0], [7.0, 0.0]])
    system = SpinSystem(smiles="CC", sites=(_site((2, 3, 4), 0.9), _site((5, 6, 7), 0.9)), j_hz=j)
    j[0, 1] = 99.0  # the caller's array must not leak into the object
    assert system.j_hz[0, 1] == 7.0
    assert not system.j_hz.flags.writeable
    with pytest.raises(ValueError):
        system.j_hz[0, 1] = 1.0
    assert system.n_h == 6
    np.testing.assert_array_equal(system.n_protons, [3, 3])


@pytest.mark.parametrize(
    "j, message",
    [
        ([[0, 7], [6, 0]], "symmetric"),
        ([[1, 7], [7, 1]], "diagonal"),
        ([[0, np.nan], [np.nan, 0]], "NaN"),
        ([[0.0]], "shape"),
    ],
)
def test_spin_system_rejects_bad_couplings(j, message):
    with pytest.raises(InputError, match=message):
        SpinSystem(smiles="CC", sites=(_site((2,)), _site((3,))), j_hz=j)


def test_spin_system_rejects_shared_atoms():
    with pytest.raises(InputError, match="more than one site"):
        SpinSystem(smiles="CC", sites=(_site((2, 3)), _site((3, 4))), j_hz=np.zeros((2, 2)))


def test_spectrum_requires_decreasing_axis_and_freezes():
    ppm = np.linspace(10, 0, 11)
    spec = Spectrum(ppm=ppm, intensity=np.zeros(11), field_mhz=400.0, metadata={"a": 1})
    assert spec.hz_per_point == pytest.approx(400.0)
    with pytest.raises(TypeError):
        spec.metadata["b"] = 2
    with pytest.raises(InputError, match="decreasing"):
        Spectrum(ppm=ppm[::-1], intensity=np.zeros(11), field_mhz=400.0)
    with pytest.raises(InputError, match="field_mhz"):
        Spectrum(ppm=ppm, intensity=np.zeros(11), field_mhz=-1.0)
    with pytest.raises(InputError, match="length"):
        Spectrum(ppm=ppm, intensity=np.zeros(10), field_mhz=400.0)


def test_line_list_lengths_must_agree():
    LineList(ppm=[1.0, 2.0], intensity=[0.5, 0.5], field_mhz=60.0, site_index=[0, 0])
    with pytest.raises(InputError):
        LineList(ppm=[1.0], intensity=[0.5, 0.5], field_mhz=60.0, site_index=[0, 0])


def test_mixture_fit_and_component():
    cand = Candidate(smiles="C=C", pathways=["user"])
    comp = ComponentFit(candidate=cand, mole_fraction=0.4, mole_fraction_sd=0.01,
                        detection_limit=0.005, detected=True, refined_shifts_ppm=[5.25])
    fit = MixtureFit(components=[comp], ppm=[2.0, 1.0], model=[0.0, 1.0], residual=[0.0, 0.0],
                     line_width_hz=1.0, quality={"r_squared": 0.99})
    assert fit.components[0].refined_shifts_ppm == (5.25,)
    with pytest.raises(InputError):
        ComponentFit(candidate=cand, mole_fraction=1.4, mole_fraction_sd=0.0,
                     detection_limit=0.0, detected=False)
    with pytest.raises(InputError, match="one mole fraction per component"):
        MixtureFit(components=[comp], ppm=[2.0, 1.0], model=[0.0, 1.0], residual=[0.0, 0.0],
                   line_width_hz=1.0, alternative_fractions=[(0.5, 0.5)])


def test_ratio_and_verdict():
    ratio = RatioEstimate(name="E:Z", numerator="E", denominator="Z", share=0.8, share_sd=0.02)
    assert ratio.ratio_text == "80:20"
    # a bound at 0 (or 1) bounds nothing and is not printed as one
    unbounded = RatioEstimate(name="E:Z", numerator="E", denominator="Z", share=1.0, share_sd=0.0,
                              decided=False, low=0.0)
    assert unbounded.ratio_text == "not bounded"
    assert RatioEstimate(name="E:Z", numerator="E", denominator="Z", share=1.0, share_sd=0.0, decided=False,
                         low=0.0, high=0.9).ratio_text == "<= 90:10"
    verdict = Verdict(summary="E alkene", confidence="high", ratios=[ratio])
    assert verdict.ratios == (ratio,)
    with pytest.raises(InputError, match="confidence"):
        Verdict(summary="?", confidence="certain")
