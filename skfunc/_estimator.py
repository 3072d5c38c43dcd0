"""What every skfunc estimator class shares beyond scikit-learn's BaseEstimator:
hyperparameters stored as given, and a readable repr.

:func:`store_init_params` stores the arguments of ``__init__`` unchanged,
one attribute per parameter, as scikit-learn requires.

A readable repr for estimators holding array parameters (grids, knots):

scikit-learn prints an estimator with the parameters that differ from their
defaults (``sklearn.utils._pprint._changed_params``) and writes an array
parameter with numpy's repr, so a 600-point ``grid`` fills the repr. skfunc
estimators print arrays of more than :data:`ARRAY_THRESHOLD` values in
numpy's summarised form (first and last :data:`ARRAY_EDGE_ITEMS` values and
``...``), keeping the rest of scikit-learn's conventions.
"""

import numpy as np

#: arrays with more values than this are summarised
ARRAY_THRESHOLD = 8

#: values kept at each end of a summarised array
ARRAY_EDGE_ITEMS = 3


def _short_arrays():
    return np.printoptions(threshold=ARRAY_THRESHOLD, edgeitems=ARRAY_EDGE_ITEMS)


class PreservesFloat32Mixin:
    """Transformers whose ``transform`` gives float32 for float32 input
    (scikit-learn's ``preserves_dtype`` tag; statistics of the fit are still
    accumulated in float64, see :func:`skfunc._blocks.output_dtype`). Place
    it before scikit-learn's ``TransformerMixin`` among the bases."""

    def __sklearn_tags__(self):
        tags = super().__sklearn_tags__()
        tags.transformer_tags.preserves_dtype = ["float64", "float32"]
        return tags


class ShortReprMixin:
    """``repr`` with long array parameters summarised."""

    def __repr__(self, N_CHAR_MAX=700):
        with _short_arrays():
            return super().__repr__(N_CHAR_MAX=N_CHAR_MAX)


def _register_with_sklearn_printer():
    """Summarise arrays also where scikit-learn prints a skfunc estimator
    inside another one (a Pipeline step, a GridSearchCV estimator).

    scikit-learn's pretty printer chooses how to print an object by its
    ``__repr__`` (``_EstimatorPrettyPrinter._dispatch``, as :mod:`pprint`
    does); the entry for :meth:`ShortReprMixin.__repr__` is scikit-learn's
    own estimator printer run with arrays summarised. Nothing changes for
    other estimators; with a scikit-learn that lacks the table, nested skfunc
    estimators print as before.
    """
    try:
        from sklearn.base import BaseEstimator
        from sklearn.utils._pprint import _EstimatorPrettyPrinter

        table = _EstimatorPrettyPrinter._dispatch
        print_estimator = table[BaseEstimator.__repr__]
    except (ImportError, AttributeError, KeyError):  # pragma: no cover
        return

    def print_short(printer, obj, stream, indent, allowance, context, level):
        with _short_arrays():
            print_estimator(printer, obj, stream, indent, allowance, context, level)

    table[ShortReprMixin.__repr__] = print_short


_register_with_sklearn_printer()


def store_init_params(estimator, arguments):
    """Store ``__init__``'s arguments (its ``locals()``) unchanged on the
    estimator, one attribute per parameter."""
    for name, value in arguments.items():
        if name not in ("self", "__class__"):
            setattr(estimator, name, value)
