"""The omnibus ANOVA against NIST StRD certified values.

Source: NIST Statistical Reference Datasets, analysis of variance
(https://www.itl.nist.gov/div898/strd/anova/anova.html), the eleven files that
ship in scipy's wheel under scipy/stats/tests/data/nist_anova. Certified to 15
significant digits; familywise must reach at least 12 on every quantity.
"""

from __future__ import annotations

import pytest

from familywise import validation


@pytest.mark.parametrize("name", validation.DATASETS)
def test_certified_values_to_twelve_digits(name: str) -> None:
    # Source: NIST StRD, dataset `name` (certified values in the file itself).
    check = validation.check(validation.load(name))
    assert check.computed.keys() >= set(validation.QUANTITIES)
    for quantity in validation.QUANTITIES:
        assert check.digits[quantity] >= 12.0, (name, quantity, check.computed[quantity],
                                                check.certified[quantity])


def test_degrees_of_freedom_match() -> None:
    # Source: NIST StRD SmLs09 (9 treatments x 2001 replicates: df 8 and 18000).
    dataset = validation.load("SmLs09")
    assert dataset.certified["df_between"] == 8 and dataset.certified["df_within"] == 18000
    assert sum(len(v) for v in dataset.groups.values()) == 18009
    check = validation.check(dataset)
    assert "df" not in check.digits


def test_float_parsing_would_lose_digits_on_smls09() -> None:
    # Why exact ingestion matters: scipy.stats.f_oneway on float64 values of
    # SmLs09 (13 constant leading digits) reaches only a few digits of F.
    import numpy as np
    from scipy import stats

    dataset = validation.load("SmLs09")
    f = stats.f_oneway(*[np.array(v, dtype=float) for v in dataset.groups.values()]).statistic
    float_digits = validation.log_relative_error(f, dataset.certified["f"])
    ours = validation.check(dataset).digits["f"]
    assert float_digits < 8 < 12 <= ours


def test_validation_report_lists_every_dataset() -> None:
    checks = validation.run()
    text = validation.report(checks)
    for name in validation.DATASETS:
        assert name in text
    assert "11 of 11 datasets pass." in text
