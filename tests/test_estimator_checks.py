"""scikit-learn's estimator checks over every public estimator.

The list comes from ``skfunc.ESTIMATORS``, so an estimator is covered by
being exported. Expected failures are listed per estimator with the reason.
"""

from sklearn.utils.estimator_checks import parametrize_with_checks

import skfunc

#: {estimator class name: {check name: why it is expected to fail}}
EXPECTED_FAILURES = {}


def _instances():
    return [cls() for cls in skfunc.ESTIMATORS]


@parametrize_with_checks(
    _instances(),
    expected_failed_checks=lambda est: EXPECTED_FAILURES.get(type(est).__name__, {}),
)
def test_sklearn_compatible(estimator, check):
    check(estimator)
