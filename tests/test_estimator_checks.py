"""scikit-learn's estimator checks over every public estimator.

The list comes from ``skfunc.utils.all_estimators()``, so an estimator is
covered by being exported. Expected failures are listed per estimator with
the reason.
"""

from sklearn.utils.estimator_checks import parametrize_with_checks

from skfunc.utils import all_estimators

#: checks that build a one-column y themselves (scikit-learn,
#: utils/estimator_checks.py); ConcurrentFunctionRidge pairs y(t) with X(t),
#: so y needs one column per column of X
_ONE_COLUMN_Y = (
    "check_all_zero_sample_weights_error check_dict_unchanged "
    "check_dont_overwrite_parameters check_dtype_object check_estimators_dtypes "
    "check_estimators_fit_returns_self check_estimators_nan_inf "
    "check_estimators_overwrite_params check_estimators_pickle "
    "check_estimators_pickle(readonly_memmap=True) check_f_contiguous_array_estimator "
    "check_fit2d_1sample check_fit2d_predict1d check_fit_check_is_fitted "
    "check_fit_idempotent check_fit_score_takes_y "
    "check_methods_sample_order_invariance check_methods_subset_invariance "
    "check_n_features_in check_n_features_in_after_fitting "
    "check_pipeline_consistency check_positive_only_tag_during_fit "
    "check_readonly_memmap_input check_regressor_data_not_an_array "
    "check_regressor_multioutput check_regressors_int "
    "check_regressors_no_decision_function check_regressors_train "
    "check_regressors_train(readonly_memmap=True) "
    "check_regressors_train(readonly_memmap=True,X_dtype=float32) "
    "check_sample_weight_equivalence_on_dense_data check_sample_weights_list "
    "check_sample_weights_not_an_array check_sample_weights_not_overwritten "
    "check_sample_weights_pandas_series check_sample_weights_shape"
).split()

#: {estimator class name: {check name: why it is expected to fail}}
EXPECTED_FAILURES = {
    "ConcurrentFunctionRidge": {
        check: (
            "the concurrent model pairs y(t) with X(t) on one grid, so y needs "
            "as many columns as X; the check builds a one-column y. The same "
            "behaviours run in tests/test_common.py with y on X's grid."
        )
        for check in _ONE_COLUMN_Y
    },
    "FunctionOnScalarRidge": {
        "check_sample_weight_equivalence_on_dense_data": (
            "The check fits 10 covariates on 15 rows, some with weight 0: the "
            "rows that count are too few for the 11 unpenalized coefficients "
            "of the penalty's null space (intercept and straight-line parts of "
            "every coefficient function, never shrunk), so the fit raises "
            "NotIdentifiableError instead of returning a minimum-norm answer."
        ),
    },
    "FunctionalLogisticRegression": {
        "check_sample_weight_equivalence_on_dense_data": (
            "On the check's 15 random rows with 3 classes, the classes are "
            "partially separable by the unpenalized part of beta (intercept and "
            "straight lines), so the penalized likelihood has no finite "
            "maximiser; coefficients diverge and probabilities on the "
            "zero-weight rows depend on where the iterations stop."
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
