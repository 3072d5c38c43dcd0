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
EXPECTED_FAILURES = {}


def _instances():
    return [cls() for _, cls in all_estimators()]


@parametrize_with_checks(
    _instances(),
    expected_failed_checks=lambda est: EXPECTED_FAILURES.get(type(est).__name__, {}),
)
def test_sklearn_compatible(estimator, check):
    check(estimator)
