"""scikit-learn's estimator checks over every public estimator.

The list comes from ``skfunc.utils.all_estimators()``, so an estimator is
covered by being exported. Expected failures are listed per estimator with
the reason.
"""

import pytest
from sklearn.utils.estimator_checks import parametrize_with_checks

from skfunc.utils import all_estimators

# about 20 s of small checks: in the full run (CI, -m "slow or not slow"),
# not in the contributors' fast default
pytestmark = pytest.mark.slow

#: {estimator class name: {check name: why it is expected to fail}}
EXPECTED_FAILURES = {
    "FunctionalLogisticRegression": {
        "check_sample_weight_equivalence_on_dense_data": (
            "measured: probabilities of the weighted and the duplicated fit agree "
            "to 7.5e-7 relative (1.8e-7 absolute), the check asks 1e-7; with the "
            "generous default number of basis functions the 3 classes on 15 "
            "random rows are nearly separated by the unpenalized part of beta, "
            "so the answer depends on where the iterations stop."
        ),
    },
}


def _instances():
    return [cls() for _, cls in all_estimators()]


@parametrize_with_checks(
    _instances(),
    expected_failed_checks=lambda est: EXPECTED_FAILURES.get(type(est).__name__, {}),
)
def test_sklearn_compatible(estimator, check):
    check(estimator)
