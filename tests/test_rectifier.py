"""Element laws and closed-form limits against published values."""

import numpy as np
import pytest

from optimiser.physics import rectifier


def test_child_langmuir_round_trip():
    # Source: Child-Langmuir law I = K*V^1.5 (REFERENCES.md, "Vacuum diode")
    k = 1e-3
    v = rectifier.child_langmuir_voltage(0.2, k)
    assert k * v ** 1.5 == pytest.approx(0.2, rel=1e-12)


def test_shockley_drop_of_a_1a_rectifier():
    # Source: JEDEC 1 kV / 1 A rectifier family, V_F <= 1.0-1.1 V at 1 A (REFERENCES.md,
    # from memory — verify); parameters are a generic fit used only for this check.
    v = rectifier.shockley_voltage(1.0, 5e-9, 1.8, 0.03)
    assert 0.8 < v < 1.1


@pytest.mark.parametrize("ratio", [0.001, 0.01, 0.1, 1.0])
def test_conduction_half_angle_solves_its_equation(ratio):
    # Source: tan(phi) - phi = pi*R_s/(n*R_L), n = 2 (REFERENCES.md, derived). The check is the
    # equation itself, and the small-angle series tan(phi) - phi ~ phi^3/3.
    phi = rectifier.conduction_half_angle(ratio, pulses=2)
    assert np.tan(phi) - phi == pytest.approx(np.pi * ratio / 2, rel=1e-9)
    if ratio <= 0.001:
        assert phi == pytest.approx(np.cbrt(3 * np.pi * ratio / 2), rel=0.01)


def test_ideal_diode_output_limits():
    # Source: REFERENCES.md ideal-diode closed form; limits: huge wCR -> 1, and the
    # cut-off angle tan(theta2) = -wCR.
    assert rectifier.ideal_diode_output(1e5) == pytest.approx(1.0, abs=1e-4)
    # Source: wCR_L = 10: a full-wave capacitor-input rectifier with ideal diodes gives ~0.91 of
    # the peak (Schade 1943, R_s = 0 curve, read to +-5 %; from memory — verify)
    assert rectifier.ideal_diode_output(10.0) == pytest.approx(0.91, rel=0.05)


def test_vector_equals_scalar():
    ratios = np.array([0.005, 0.05, 0.3])
    vec = rectifier.conduction_half_angle(ratios)
    assert np.allclose(vec, [rectifier.conduction_half_angle(r) for r in ratios], rtol=1e-12)
