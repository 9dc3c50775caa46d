import pytest

from workbench.errors import ValueRangeError
from workbench.physics.lte import check_mcwhirter, mcwhirter_min_electron_density_per_cm3


def test_mcwhirter_by_hand():
    # McWhirter (1965): 1.6e12 · √T · ΔE³; by hand: 1.6e12 × √10000 (=100) × 3³ (=27) = 4.32e15.
    assert mcwhirter_min_electron_density_per_cm3(10_000.0, 3.0) == pytest.approx(
        4.32e15, rel=1e-12
    )


def test_check_mcwhirter_outcomes():
    met = check_mcwhirter(10_000.0, 1e17, 3.0)
    assert met.satisfied is True and met.required_per_cm3 == pytest.approx(4.32e15)
    assert "necessary, not sufficient" in met.message and "Cristoforetti" in met.message
    not_met = check_mcwhirter(10_000.0, 1e15, 3.0)
    assert not_met.satisfied is False and "NOT met" in not_met.message
    unknown = check_mcwhirter(10_000.0, None, 3.0)
    assert unknown.satisfied is None and unknown.given_per_cm3 is None
    assert unknown.to_dict()["satisfied"] is None


def test_bad_inputs():
    with pytest.raises(ValueRangeError, match="delta_E_eV"):
        mcwhirter_min_electron_density_per_cm3(1e4, 0.0)
    with pytest.raises(ValueRangeError, match="electron_density_per_cm3"):
        check_mcwhirter(1e4, -3.0, 2.0)
