"""Several channels per sample: the layout, its validation and the composite
basis that lets the single-channel engine fit them.

A sample logs several signals at once (a kiln's temperature and its oxygen
level). ``X`` stays 2-D: the channels' columns side by side, channel by
channel, each channel on its own grid and domain. The layout is declared

* by ``grid`` given as a mapping ``{channel name: grid}`` (in column order), or
* by DataFrame columns keyed by ``(channel, time)`` (a two-level
  ``pandas.MultiIndex``, as :func:`skfunc.irregular.curves_from_table`
  returns with ``channel=``); each channel's times are its grid.

Fitted state stays plain: ``grid_`` is the channels' grids concatenated
(one point per curve column), ``channel_names_`` (list of str) and
``channel_sizes_`` (list of int) cut it into channels.

How the estimators use it:

* coupled fits (FunctionalRidge, FunctionalRidgeCV,
  FunctionalLogisticRegression, FunctionalPCA) see one curve on the
  concatenated grid, expanded in :class:`ChannelBasis`, the block-diagonal
  composite of the channels' own bases (quadrature weights per channel,
  :func:`curve_weights`). A roughness penalty is one block per channel, each
  measured on its own unit-free scale (:func:`channel_penalty`), so a change
  of units of one channel changes no prediction; FunctionalPCA weighs the
  channels' inner products (:func:`channel_coordinates`);
* channel-separable transformers (BasisFeatures, CurveSmoother) fit one
  single-channel estimator per channel (:class:`ChannelwiseMixin`, on the
  fit skeleton of :mod:`skfunc._fit`, channel by channel): their problem is
  block diagonal, so this is the same fit with each channel's own alpha.

The channels' columns in grids, curves and coefficients are
:func:`channel_slices` of their sizes.
"""

from collections.abc import Mapping
from contextlib import contextmanager
from numbers import Integral

import numpy as np
from scipy.linalg import block_diag
from sklearn.base import clone
from sklearn.utils.validation import check_is_fitted

from ._grid import check_grid, grid_from_labels, quadrature_weights, same_grid
from ._penalized import Penalty, merge, penalty_for, penalty_scale

# ---------------------------------------------------------------- the layout


def is_channel_grid(grid):
    """Whether a ``grid`` parameter declares channels (a mapping)."""
    return isinstance(grid, Mapping)


def accepting():
    """The names of the estimators that accept several channels (those whose
    class sets ``_accepts_channels``), for messages: "A, B and C"."""
    from .utils import all_estimators

    names = [n for n, cls in all_estimators() if getattr(cls, "_accepts_channels", False)]
    return f"{', '.join(names[:-1])} and {names[-1]}"


def channel_slices(sizes):
    """The columns of each channel (a slice each) in values laid side by side
    channel by channel, channel ``c`` taking ``sizes[c]`` columns: the one
    rule for the channels' boundaries in grids, curves and coefficients."""
    bounds = np.cumsum([0, *sizes])
    return [slice(int(a), int(b)) for a, b in zip(bounds[:-1], bounds[1:])]


def _multi_columns(X, n_covariates=0):
    """The (channel, time) column labels of a DataFrame (those of its curve
    columns: without the ``n_covariates`` trailing ones), or None."""
    columns = getattr(X, "columns", None)
    nlevels = getattr(columns, "nlevels", 1) if columns is not None else 1
    if not isinstance(nlevels, Integral) or nlevels == 1:  # (lazy collections too)
        return None
    if columns.nlevels != 2:
        raise ValueError(
            f"X has column labels of {columns.nlevels} levels; channels are read "
            "from two levels, (channel, time)."
        )
    return list(columns)[: len(columns) - n_covariates]


def _grid_layout(grid):
    """Names and checked grids of a ``{channel: grid}`` mapping."""
    if not grid:
        raise ValueError("grid is an empty mapping; give at least one channel: "
                         "{name: grid}.")
    names, grids = [], []
    for name, points in grid.items():
        if not isinstance(name, str):
            raise TypeError(
                f"Channel names (the keys of grid) must be strings; got {name!r}."
            )
        names.append(name)
        grids.append(check_grid(points, name=f"grid[{name!r}]"))
    return names, grids


def _label_layout(labels):
    """Names, per-channel time labels of (channel, time) column labels, in
    column order; each channel's columns must be contiguous."""
    names, times = [], []
    for channel, t in labels:
        channel = str(channel)
        if names and channel == names[-1]:
            times[-1].append(t)
            continue
        if channel in names:
            raise ValueError(
                f"The columns of channel {channel!r} in X are not side by side: "
                "order the columns channel by channel (for example "
                "X.sort_index(axis=1, level=0, sort_remaining=False))."
            )
        names.append(channel)
        times.append([t])
    return names, times


def _describe(names, sizes):
    return ", ".join(f"{n!r}: {s}" for n, s in zip(names, sizes))


def _layout_mismatch(found, times, names, grids):
    """None when the channels ``found`` of (channel, time) labels, with
    ``times`` per channel, are the channels ``names`` with as many points as
    their ``grids``, in order; else the descriptions of both layouts."""
    sizes, expected = [len(t) for t in times], [g.size for g in grids]
    if found == names and sizes == expected:
        return None
    return _describe(found, sizes), _describe(names, expected)


def fitted_channels(estimator):
    """``(names, grids)`` of a fitted multichannel estimator, else None."""
    sizes = getattr(estimator, "channel_sizes_", None)
    if sizes is None:
        return None
    grids = [estimator.grid_[cols] for cols in channel_slices(sizes)]
    return list(estimator.channel_names_), grids


def set_channels(estimator, X, n_points, n_covariates=0):
    """At fit: store the channel layout declared by ``grid`` or by X's
    (channel, time) columns; return False when none is declared.

    Sets ``grid_`` (the channels' grids concatenated), ``channel_names_``
    and ``channel_sizes_``; a fit without channels removes them.
    """
    for attr in ("channel_names_", "channel_sizes_", "channel_weights_"):
        vars(estimator).pop(attr, None)
    grid = getattr(estimator, "grid", None)
    labels = _multi_columns(X, n_covariates)
    if not is_channel_grid(grid) and labels is None:
        return False
    name = type(estimator).__name__
    if not getattr(estimator, "_accepts_channels", False):
        what = "grid is a mapping of channels" if is_channel_grid(grid) else \
            "X has (channel, time) column labels"
        raise ValueError(
            f"{what}, but {name} takes one curve per row; the estimators that "
            f"accept several channels are {accepting()}. Fit one {name} per channel "
            "(select its columns) instead."
        )
    if labels is not None:
        label_names, times = _label_layout(labels)
    if is_channel_grid(grid):
        names, grids = _grid_layout(grid)
        mismatch = labels is not None and _layout_mismatch(label_names, times, names,
                                                           grids)
        if mismatch:
            raise ValueError(
                f"The (channel, time) columns of X ({mismatch[0]} columns) do not "
                f"match the channels of grid ({mismatch[1]} points), in order; give "
                "the channels' grids in the order of X's columns."
            )
    else:
        names = label_names
        grids = []
        for channel, t in zip(names, times):
            inferred = grid_from_labels(t)
            grids.append(
                check_grid(inferred, name=f"the times of channel {channel!r}")
                if inferred is not None else np.linspace(0.0, 1.0, len(t))
            )
    sizes = [int(g.size) for g in grids]
    if sum(sizes) != n_points:
        extra = f" (besides the {n_covariates} covariate column(s))" if n_covariates \
            else ""
        raise ValueError(
            f"X has {n_points} curve column(s){extra}, but the channels declare "
            f"{sum(sizes)} grid points ({_describe(names, sizes)}); give X one "
            "column per grid point of each channel, channel by channel."
        )
    estimator.grid_ = np.concatenate(grids)
    estimator.channel_names_ = names
    estimator.channel_sizes_ = sizes
    return True


def check_channels(estimator, X, n_covariates=0):
    """After fit: X's (channel, time) labels must match the fitted layout.

    Returns True when the estimator was fitted with channels (the caller
    skips its single-grid label check), False otherwise.
    """
    labels = _multi_columns(X, n_covariates)
    layout = fitted_channels(estimator)
    name = type(estimator).__name__
    if layout is None:
        if labels is not None:
            raise ValueError(
                f"X has (channel, time) column labels, but {name} was fitted on "
                "one curve per row; pass X as it was at fit."
            )
        return False
    if labels is None:
        columns = getattr(X, "columns", None)
        if columns is not None and grid_from_labels(
                list(columns)[: len(columns) - n_covariates]) is not None:
            raise ValueError(
                f"X has plain time labels, but {name} was fitted on channels "
                f"{layout[0]}; pass (channel, time) column labels or an array "
                "with the channels' columns side by side."
            )
        return True
    names, grids = layout
    found, times = _label_layout(labels)
    unknown = [c for c in found if c not in names]
    if unknown:
        raise ValueError(
            f"X has columns of channel(s) {unknown} that {name} was not fitted "
            f"on; fitted channels: {names}."
        )
    mismatch = _layout_mismatch(found, times, names, grids)
    if mismatch:
        raise ValueError(
            f"The channels of X ({mismatch[0]} columns) differ from those {name} "
            f"was fitted on ({mismatch[1]}), in order; pass every fitted channel, "
            "in the same order, on its fitted grid."
        )
    for channel, t, g in zip(names, times, grids):
        inferred = grid_from_labels(t)
        if inferred is not None and not same_grid(inferred, g):
            raise ValueError(
                f"The time labels of channel {channel!r} in X differ from the grid "
                f"{name} was fitted on; resample that channel to its fitted grid."
            )
    return True


def curve_weights(estimator):
    """Quadrature weights on ``grid_``, channel by channel."""
    layout = fitted_channels(estimator)
    if layout is None:
        return quadrature_weights(estimator.grid_, estimator.quadrature)
    return np.concatenate(
        [quadrature_weights(g, estimator.quadrature) for g in layout[1]]
    )


def split_channels(estimator, values):
    """Cut values on a fitted multichannel estimator's ``grid_`` by channel.

    Parameters
    ----------
    estimator : fitted skfunc estimator
        Fitted with channels (``channel_names_`` and ``channel_sizes_``).
    values : array-like of shape (..., n_points)
        Values on ``grid_`` along the last axis, such as ``coef_function_``,
        ``components_`` or ``mean_``.

    Returns
    -------
    channels : dict
        Channel name -> ``(grid, values)``: the channel's grid and its part
        of ``values``.

    Examples
    --------
    >>> import numpy as np
    >>> from skfunc.channels import split_channels
    >>> from skfunc.decomposition import FunctionalPCA
    >>> t, u = np.linspace(0, 1, 5), np.linspace(0, 2, 3)
    >>> X = np.random.default_rng(0).normal(size=(10, 8))
    >>> fpca = FunctionalPCA(2, grid={"temperature": t, "oxygen": u}).fit(X)
    >>> parts = split_channels(fpca, fpca.mean_)
    >>> {name: values.shape for name, (grid, values) in parts.items()}
    {'temperature': (5,), 'oxygen': (3,)}
    """
    check_is_fitted(estimator)
    layout = fitted_channels(estimator)
    if layout is None:
        raise ValueError(
            f"{type(estimator).__name__} was fitted on one curve per row, not on "
            "channels; its values need no splitting."
        )
    values = np.asarray(values)
    total = estimator.grid_.size
    if values.ndim == 0 or values.shape[-1] != total:
        raise ValueError(
            f"values must have {total} entries along the last axis (one per point "
            f"of grid_); got shape {values.shape}."
        )
    slices = channel_slices(estimator.channel_sizes_)
    return {name: (g, values[..., cols]) for name, g, cols in zip(*layout, slices)}


def channel_columns(estimator, channel, name):
    """The columns of ``grid_`` of one channel of a fitted estimator (a
    slice), or ``slice(None)`` for an estimator without channels and
    ``channel=None``; ``name`` is the caller, for messages."""
    layout = fitted_channels(estimator)
    if layout is None:
        if channel is not None:
            raise ValueError(
                f"channel={channel!r} was given, but {type(estimator).__name__} was "
                f"fitted on one curve per row; {name} needs channel=None."
            )
        return slice(None)
    names = layout[0]
    if channel not in names:
        raise ValueError(
            f"{type(estimator).__name__} was fitted on channels {names}; pass "
            f"{name} one of them as channel= (got {channel!r})."
        )
    return channel_slices(estimator.channel_sizes_)[names.index(channel)]


# ------------------------------------------------------- the composite basis


class ChannelBasis:
    """Block-diagonal composite of the channels' bases.

    Channel ``c``'s curve is expanded in its own basis on its own domain, so
    values, Gram, roughness and null-space matrices are block diagonal; the
    coefficients are the channels' coefficients side by side. ``evaluate``
    takes points concatenated channel by channel with the sizes of the
    fitted grids.
    """

    name = "channels"

    def __init__(self, bases, grids):
        self.bases = list(bases)
        self.grid_sizes = [int(np.size(g)) for g in grids]
        self.sizes = [b.n_basis for b in self.bases]
        self.n_basis = int(sum(self.sizes))

    def _split(self, t):
        t = np.asarray(t, dtype=np.float64)
        if t.ndim != 1 or t.size != sum(self.grid_sizes):
            raise ValueError(
                f"Points of a multichannel basis must be the channels' points side "
                f"by side ({sum(self.grid_sizes)} values); got shape {t.shape}."
            )
        return [t[cols] for cols in channel_slices(self.grid_sizes)]

    def evaluate(self, t, derivative=0):
        return block_diag(*[b.evaluate(part, derivative)
                            for b, part in zip(self.bases, self._split(t))])

    def _blocks(self, method, *args):
        return block_diag(*[getattr(b, method)(*args) for b in self.bases])

    def gram(self):
        return self._blocks("gram")

    def penalty(self, order):
        return self._blocks("penalty", order)

    def roughness(self, order):
        return self._blocks("roughness", order)

    def unit_roughness(self, order):
        return self._blocks("unit_roughness", order)

    def unit_gram(self):
        return self._blocks("unit_gram")

    def null_space(self, order):
        return self._blocks("null_space", order)

    def null_dimension(self, order):
        return sum(b.null_dimension(order) for b in self.bases)


#: basis parameters that may be given per channel, as a mapping
#: ``{channel: value}`` (a channel left out takes None, the default)
PER_CHANNEL_BASIS = ("n_basis", "interior_knots")


def per_channel(estimator, param, names):
    """The values of parameter ``param`` for the channels ``names``: the
    one value for every channel, or a mapping's entry by channel (None for a
    channel left out). A mapping naming an unknown channel is an error."""
    value = getattr(estimator, param, None)
    if not is_channel_grid(value):
        return [value] * len(names)
    unknown = [n for n in value if n not in names]
    if unknown:
        raise ValueError(
            f"{param} names channel(s) {unknown} that X does not have; channels: "
            f"{names} (a channel left out takes the default, None)."
        )
    values = [value.get(n) for n in names]
    if param == "n_basis":
        for name, v in zip(names, values):
            if v is not None and (not isinstance(v, Integral) or isinstance(v, bool)
                                  or v < 1):
                raise ValueError(
                    f"n_basis[{name!r}] must be an int >= 1 or None (the default "
                    f"for that channel's grid); got {v!r}."
                )
    return values


@contextmanager
def naming_channel(name):
    """Prefix a ValueError/TypeError raised inside with ``Channel 'name': ``
    (same exception type), so a per-channel failure says which channel."""
    try:
        yield
    except (ValueError, TypeError) as exc:
        if str(exc).startswith("Channel "):
            raise
        try:
            renamed = type(exc)(f"Channel {name!r}: {exc}")
        except Exception:  # an exception type with another signature
            raise exc from None
        raise renamed from exc


class _ChannelView:
    """An estimator's parameters as one channel sees them (the per-channel
    values of :data:`PER_CHANNEL_BASIS`, everything else the estimator's)."""

    def __init__(self, estimator, values):
        self._estimator = estimator
        vars(self).update(values)

    def __getattr__(self, name):
        if name == "_estimator":
            raise AttributeError(name)
        return getattr(self._estimator, name)


def channel_params(estimator, params, names):
    """Each channel's own values of those of ``params`` that ``estimator``
    has as mappings ``{channel: value}`` (checked by :func:`per_channel`):
    one dict per channel of ``names``; the other parameters are the
    estimator's, alike for every channel."""
    values = {p: per_channel(estimator, p, names) for p in params
              if is_channel_grid(getattr(estimator, p, None))}
    return [{p: v[c] for p, v in values.items()} for c in range(len(names))]


def channel_basis(single_basis_for, estimator, cap):
    """The :class:`ChannelBasis` of a fitted multichannel estimator: each
    channel's basis from the estimator's basis parameters on its own grid
    (``n_basis`` and ``interior_knots`` may be mappings by channel)."""
    names, grids = fitted_channels(estimator)
    bases = []
    for name, g, params in zip(names, grids,
                               channel_params(estimator, PER_CHANNEL_BASIS, names)):
        with naming_channel(name):
            bases.append(single_basis_for(_ChannelView(estimator, params), g, cap))
    return ChannelBasis(bases, grids)


def channel_penalty(basis, order, gram):
    """The split roughness penalty of ``basis``, each channel on its own scale.

    For a plain basis, :func:`skfunc._penalized.penalty_for`. For a
    :class:`ChannelBasis`, channel ``c``'s block is its roughness on the
    unit domain times ``s_c = penalty_scale(G_cc)``, the largest eigenvalue
    of the channel's own block of the data's cross products ``gram``
    against its unit-domain Gram matrix, and the metric is scaled alike.
    Multiplying channel ``c``'s values by ``a`` multiplies ``G_cc`` and
    ``s_c`` by ``a^2``; with coefficients divided by ``a`` the penalized
    criterion is unchanged, so the fit and its predictions are too. With one
    channel the penalty is ``s_1`` times the plain one and the engine's scale
    (against the scaled metric) ``1 / s_1`` times the plain one: the same
    fit.
    """
    if not isinstance(basis, ChannelBasis):
        return penalty_for(basis, order)
    gram = np.asarray(gram, dtype=np.float64)
    parts = [penalty_for(b, order) for b in basis.bases]
    scales = [penalty_scale(gram[cols, cols], part)
              for cols, part in zip(channel_slices(basis.sizes), parts)]
    # the split coordinates channel by channel (null-space columns of every
    # channel first, as Penalty keeps them), each divided by sqrt(s_c): the
    # engine's coordinates then do not change with any channel's units
    out = Penalty.__new__(Penalty)
    out.matrix = block_diag(*[s * p.matrix for s, p in zip(scales, parts)])
    out.metric = block_diag(*[s * p.metric for s, p in zip(scales, parts)])
    out.n_null = sum(p.n_null for p in parts)
    null = [p.transform[:, : p.n_null] / np.sqrt(s) for s, p in zip(scales, parts)]
    rest = [p.transform[:, p.n_null :] / np.sqrt(s) for s, p in zip(scales, parts)]
    out.transform = np.hstack([block_diag(*null), block_diag(*rest)])
    return out


# -------------------------------------------- multivariate principal components


class ScaledCoordinates:
    """L2 coordinates with channel ``c``'s multiplied by ``d_c = sqrt(v_c)``:
    Euclidean inner products of the scaled coordinates are the weighted inner
    products ``sum_c v_c <f_c, g_c>`` (Happ and Greven, 2018)."""

    def __init__(self, coords, d, d_grid):
        self.coords, self.d, self.d_grid = coords, d, d_grid
        self.weights = coords.weights
        self.n_coordinates = coords.n_coordinates

    def __getattr__(self, name):  # everything else as the unweighted maps
        if name == "coords":
            raise AttributeError(name)
        return getattr(self.coords, name)

    def values(self, Y):
        return self.coords.values(Y / self.d[:, None])

    def coefficients(self, Y):
        return self.coords.coefficients(Y / self.d[:, None])

    def projection(self, Y):
        return self.coords.projection(Y * self.d[:, None])

    def unit_free_values(self, Y):
        """Values times ``sqrt(v_c)`` (k, m): what the sign convention reads,
        so that signs do not follow one channel's units."""
        return self.values(Y) * self.d_grid


#: channel weights of FunctionalPCA
CHANNEL_WEIGHTS = ("inverse_variance", "equal")


def channel_coordinates(estimator, coords, squares, mean):
    """Channel weights of a multichannel FunctionalPCA and its scaled
    coordinates; ``(coords, None)`` without channels.

    ``squares`` (K,) holds the variances of the unweighted coordinates; the
    integrated variance of channel ``c`` is the sum over its coordinates.
    A channel whose variance is rounding against its mean's square (below
    1e-20 of it, as FunctionalPCA's own zero-variance rule) has none.
    Returns the :class:`ScaledCoordinates` and the per-coordinate factors
    ``d``, and sets ``channel_weights_``.
    """
    layout = fitted_channels(estimator)
    if layout is None:
        return coords, None
    names = layout[0]
    if estimator.basis is None:
        sizes = estimator.channel_sizes_
    else:
        from ._validation import basis_for

        sizes = basis_for(estimator, estimator.grid_).sizes
    cuts = channel_slices(sizes)
    option = estimator.channel_weights
    if isinstance(option, Mapping):
        missing = [n for n in names if n not in option]
        extra = [n for n in option if n not in names]
        if missing or extra:
            raise ValueError(
                f"channel_weights must give a weight for each fitted channel "
                f"{names}; missing {missing}, unknown {extra}."
            )
        weights = np.array([option[n] for n in names], dtype=np.float64)
        if not np.all(np.isfinite(weights) & (weights > 0)):
            raise ValueError(
                f"channel_weights must be positive finite numbers; got {dict(option)}."
            )
    elif option == "equal":
        weights = np.ones(len(names))
    else:
        variance = np.array([squares[cols].sum() for cols in cuts])
        level = np.array([mean[cols] @ mean[cols] for cols in cuts])
        flat = [n for n, v, m in zip(names, variance, level) if v <= 1e-20 * m or v <= 0]
        if flat:
            raise ValueError(
                f"Channel(s) {flat} of X have zero variance, so "
                "channel_weights='inverse_variance' (one over each channel's "
                "integrated variance) is undefined; drop the channel or pass "
                "channel_weights as a dict."
            )
        weights = 1.0 / variance
    estimator.channel_weights_ = weights
    d = np.repeat(np.sqrt(weights), sizes)
    d_grid = np.repeat(np.sqrt(weights), estimator.channel_sizes_)
    return ScaledCoordinates(coords, d, d_grid), d


# ------------------------------------------- channel-separable transformers


class _ChannelStatistics:
    """A block's statistics with channels: each channel's estimator's
    statistics of its columns (``blocks``, channel by channel), a list
    (picklable, for Dask workers)."""

    def __init__(self, names, functions):
        self.names, self.functions = names, functions

    def __call__(self, *blocks):
        out = []
        for name, function, block in zip(self.names, self.functions, blocks):
            with naming_channel(name):
                out.append(function(block))
        return out


class ChannelwiseMixin:
    """Channels for transformers whose problem separates by channel.

    With a channel layout the estimator holds one clone of itself per
    channel (its grid the channel's grid, its parameters otherwise the same;
    those in ``_channel_params`` may be mappings {channel: value}, a channel
    left out taking None), stored in ``channel_estimators_``, and fits on the
    skeleton of :class:`skfunc._fit.AdditiveFitMixin` channel by channel:
    each channel's estimator validates its columns of a batch, a block's
    statistics are the list of the channels' statistics, merged channel by
    channel, and the solve is each channel's solve from its own statistics.
    The problem being block diagonal, this is the joint fit with each
    channel's own alpha. Outputs are the channels' outputs side by side.
    Without a layout nothing changes. It comes first among the bases: its
    hooks wrap the skeleton's and the estimator's ``_validate_batch``.
    """

    _accepts_channels = True
    _channel_params = ()

    def _validate_batch(self, X, y, sample_weight, first):
        if first:
            vars(self).pop("channel_estimators_", None)
            if not is_channel_grid(self.grid) and _multi_columns(X) is None:
                return super()._validate_batch(X, y, sample_weight, first)
        elif not hasattr(self, "channel_estimators_"):
            return super()._validate_batch(X, y, sample_weight, first)
        from ._validation import validate_curves

        X = validate_curves(self, X, reset=first, allow_nan=True)
        names = self.channel_names_
        if first:
            params = channel_params(self, self._channel_params, names)
            self.channel_estimators_ = [
                clone(self).set_params(grid=g, **p)
                for g, p in zip(fitted_channels(self)[1], params)
            ]
        blocks = []
        for name, est, cols in zip(names, self.channel_estimators_,
                                   channel_slices(self.channel_sizes_)):
            with naming_channel(name):
                if first:
                    est._validate_params()
                blocks.append(est._validate_batch(X[:, cols], None, None, first)[0])
        return tuple(blocks)

    def _statistics_function(self):
        if not hasattr(self, "channel_estimators_"):
            return super()._statistics_function()
        return _ChannelStatistics(
            self.channel_names_, [e._statistics_function() for e in self.channel_estimators_]
        )

    def _first_batch(self, stats, arrays):
        if not hasattr(self, "channel_estimators_"):
            return super()._first_batch(stats, arrays)
        out = []
        for name, est, part, block in zip(self.channel_names_, self.channel_estimators_,
                                          stats, arrays):
            with naming_channel(name):
                out.append(est._first_batch(part, (block,)))
        return out

    @staticmethod
    def _merge_statistics(*stats):
        """Statistics merged key by key (:func:`skfunc._penalized.merge`);
        with channels (lists), channel by channel."""
        if isinstance(stats[0], list):
            return [merge(*parts) for parts in zip(*stats)]
        return merge(*stats)

    def _solve_statistics(self):
        if not hasattr(self, "channel_estimators_"):
            return super()._solve_statistics()
        for name, est, stats in zip(self.channel_names_, self.channel_estimators_,
                                    self._partial_statistics):
            est._partial_statistics, est.n_samples_seen_ = stats, self.n_samples_seen_
            with naming_channel(name):
                est._solve_statistics()
        self._collect_channels()
        return self

    def _collect_channels(self):
        """Set the estimator's summary attributes from its channels'."""
        ests = self.channel_estimators_
        self.alpha_ = np.array([e.alpha_ for e in ests])
        self.edf_ = np.array([e.edf_ for e in ests])
        self.n_basis_ = int(sum(e.n_basis_ for e in ests))
        if hasattr(ests[0], "eval_points_"):
            self.eval_points_ = np.concatenate([e.eval_points_ for e in ests])

    def _per_channel(self, X, method, columns=False):
        """``method`` of each channel's estimator on its columns of X, side
        by side (``columns``: each output is one column)."""
        from ._validation import validate_curves

        X = validate_curves(self, X, reset=False, allow_nan=True)
        return split_columns(self, X, method, self.channel_sizes_, columns)

    def _channel_feature_names(self, input_features):
        """Output names ``channel__name`` from the channels' estimators."""
        from sklearn.utils.validation import _check_feature_names_in

        _check_feature_names_in(self, input_features, generate_names=False)
        names = [
            f"{channel}__{feature}"
            for channel, est in zip(self.channel_names_, self.channel_estimators_)
            for feature in est.get_feature_names_out()
        ]
        return np.asarray(names, dtype=object)


def split_columns(estimator, X, method, widths, columns=False):
    """``method`` of each channel's estimator on its ``widths`` columns of X
    (curves, or outputs of the estimator such as coordinates), side by side
    (``columns``: each output is one column)."""
    parts = [getattr(e, method)(X[:, cols]) for e, cols in
             zip(estimator.channel_estimators_, channel_slices(widths))]
    if columns:
        parts = [p[:, None] for p in parts]
    return _hstack(parts)


def _hstack(parts):
    if any(type(p).__module__.startswith("dask") for p in parts):
        import dask.array as da

        return da.hstack(parts)
    return np.hstack(parts)
