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


class ShortReprMixin:
    """``repr`` with long array parameters summarised."""

    def __repr__(self, N_CHAR_MAX=700):
        with np.printoptions(threshold=ARRAY_THRESHOLD, edgeitems=ARRAY_EDGE_ITEMS):
            return super().__repr__(N_CHAR_MAX=N_CHAR_MAX)


def store_init_params(estimator, arguments):
    """Store ``__init__``'s arguments (its ``locals()``) unchanged on the
    estimator, one attribute per parameter."""
    for name, value in arguments.items():
        if name not in ("self", "__class__"):
            setattr(estimator, name, value)
