"""Effective-medium rules (Bruggeman, Maxwell Garnett) — defining equations and limits."""
import numpy as np
import pytest

from diskexplorer.dust import bruggeman, maxwell_garnett, porous
from diskexplorer.errors import DustError

EPS = [2.24 + 0.30j, -5 + 1j, 10 + 10j, 1.5 + 0.01j]


@pytest.mark.parametrize("e1", EPS)
@pytest.mark.parametrize("f", [0.0, 0.2, 0.5, 0.9])
def test_bruggeman_solves_its_equation_with_physical_root(e1, f):
    # Defining equation (Bruggeman 1935; B&H 1983 §8.5, FROM MEMORY):
    # Σ f_j (ε_j − ε)/(ε_j + 2ε) = 0, root with Im ε ≥ 0.
    e2 = 1.0 + 0j
    e = bruggeman([e1, e2], [1 - f, f])
    resid = (1 - f) * (e1 - e) / (e1 + 2 * e) + f * (e2 - e) / (e2 + 2 * e)
    assert abs(resid) < 1e-12
    assert e.imag >= -1e-14


def test_bruggeman_three_components_and_symmetry():
    e = [2.24 + 0.3j, 10 + 10j, 1.0 + 0j]
    f = [0.5, 0.2, 0.3]
    r3 = bruggeman(e, f)
    resid = sum(fj * (ej - r3) / (ej + 2 * r3) for fj, ej in zip(f, e))
    assert abs(resid) < 1e-10
    # Order of components does not matter (no host in Bruggeman's rule).
    assert bruggeman(e[::-1], f[::-1]) == pytest.approx(r3, rel=1e-10)
    # Two identical components give that component.
    assert bruggeman([e[0], e[0]], [0.3, 0.7]) == pytest.approx(e[0], rel=1e-12)


def test_maxwell_garnett_limits_and_agreement_with_bruggeman_at_low_fill():
    em, ei = 2.24 + 0.3j, 10 + 10j
    assert maxwell_garnett(em, ei, 0.0) == pytest.approx(em)
    assert maxwell_garnett(em, ei, 1.0) == pytest.approx(ei)
    # Both rules agree to first order in the inclusion fraction f (difference O(f²)).
    for f in (1e-3, 1e-2):
        d = abs(maxwell_garnett(em, ei, f) - bruggeman([em, ei], [1 - f, f]))
        assert d < 10 * f ** 2 * abs(ei - em)


def test_porous_vacuum_lowers_epsilon_and_refuses_bad_porosity():
    e = 2.24 + 0.3j
    for rule in ("bruggeman", "maxwell_garnett"):
        p = porous(e, 0.5, rule=rule)
        assert 1.0 < p.real < e.real
    with pytest.raises(DustError, match="porosity"):
        porous(e, 1.0)
    with pytest.raises(DustError, match="mixing rule"):
        porous(e, 0.3, rule="looyenga")


def test_effective_constants_for_porous_grains():
    from diskexplorer.dust import OpticalConstants, effective_constants, kappa_abs
    lam = np.array([1.0, 5.0, 10.0, 20.0])
    oc = OpticalConstants(lam, np.array([1.7, 1.6, 1.4, 2.0]), np.array([0.01, 0.02, 0.8, 0.3]),
                          name="glass")
    por = effective_constants([oc, "vacuum"], [0.7, 0.3])
    e = por.epsilon(lam)
    np.testing.assert_allclose(e, bruggeman([oc.epsilon(lam), 1.0], [0.7, 0.3]), rtol=1e-12)
    assert "bruggeman effective medium of 0.7 glass, 0.3 vacuum" in por.notes[-1]
    mg = effective_constants([oc, "vacuum"], [0.7, 0.3], rule="maxwell_garnett")
    np.testing.assert_allclose(mg.epsilon(lam), maxwell_garnett(oc.epsilon(lam), 1.0, 0.3), rtol=1e-12)
    # zero porosity returns the material itself
    np.testing.assert_allclose(effective_constants([oc, "vacuum"], [1.0, 0.0]).m(lam), oc.m(lam), rtol=1e-12)
    assert np.all(kappa_abs(por, 0.7 * 3.0, lam, method="cde") > 0)
    with pytest.raises(DustError, match="two components"):
        effective_constants([oc, "vacuum", oc], [0.3, 0.3, 0.4], rule="maxwell_garnett")
