"""Curves as they arrive: from long tables and ragged arrays to the NaN-padded
matrix every skfunc estimator reads.

Both entry points gather observations ``(sample, time, value[, channel])``,
check them, place each sample's values on a grid (one row per sample, NaN
where it was not observed) and return that matrix with its grid.
"""

from numbers import Integral

import numpy as np
from sklearn.utils import Bunch

TIME_SCALES = ("absolute", "relative")

#: refuse to build a padded matrix of more values than this (8 GB of float64);
#: pass a coarser grid to bin the observations instead
MAX_VALUES = 10**9


def _plain(value):
    """A numpy scalar as the Python value (for readable messages)."""
    return value.item() if isinstance(value, np.generic) else value


def _column(data, name, what):
    try:
        column = data[name]
    except (KeyError, IndexError, TypeError) as exc:
        raise ValueError(
            f"{what}={name!r} is not a column of the table; pass the column name "
            f"holding the {what} of each observation."
        ) from exc
    return np.asarray(column)


def _check_times(times, domain, where):
    times = np.asarray(times, dtype=np.float64)
    bad = ~np.isfinite(times)
    if bad.any():
        raise ValueError(
            f"Times must be finite numbers; {where(int(np.flatnonzero(bad)[0]))} has "
            f"time {times[bad][0]!r}."
        )
    if domain is not None:
        a, b = _check_domain(domain)
        out = (times < a) | (times > b)
        if out.any():
            first = int(np.flatnonzero(out)[0])
            raise ValueError(
                f"{where(first)} has time {times[first]!r}, outside the declared "
                f"domain [{a}, {b}]; correct the time or widen domain."
            )
    return times


def _check_domain(domain):
    try:
        a, b = (float(v) for v in domain)
    except (TypeError, ValueError) as exc:
        raise ValueError(f"domain must be a pair (start, end); got {domain!r}.") from exc
    if not (np.isfinite(a) and np.isfinite(b) and a < b):
        raise ValueError(f"domain must be finite with start < end; got {domain!r}.")
    return a, b


def _relative(times, sample, n_samples, label):
    """``(t - first) / (last - first)`` per sample: each run on [0, 1]."""
    first = np.full(n_samples, np.inf)
    last = np.full(n_samples, -np.inf)
    np.minimum.at(first, sample, times)
    np.maximum.at(last, sample, times)
    span = last - first
    short = np.flatnonzero(span <= 0)
    if short.size:
        raise ValueError(
            f"time_scale='relative' maps each sample's times onto [0, 1] by its own "
            f"first and last time, but sample {label(short[0])!r} has a single "
            "distinct time; use time_scale='absolute' or drop that sample."
        )
    return (times - first[sample]) / span[sample]


def _snap(times, grid):
    """Index of the nearest grid point (bins end half-way between points; a
    time exactly half-way goes to the later point)."""
    edges = (grid[:-1] + grid[1:]) / 2
    index = np.searchsorted(edges, times, side="right")
    low = grid[0] - (grid[1] - grid[0]) / 2
    high = grid[-1] + (grid[-1] - grid[-2]) / 2
    outside = (times < low) | (times > high)
    if outside.any():
        t = times[np.flatnonzero(outside)[0]]
        raise ValueError(
            f"Time {t!r} lies more than half a step outside the grid "
            f"[{grid[0]}, {grid[-1]}]; extend the grid to cover every time."
        )
    return index


def _resolve_grid(grid, times, domain):
    """The grid and each observation's column."""
    if grid is None:
        points, index = np.unique(times, return_inverse=True)
        return points, index
    if isinstance(grid, Integral) and not isinstance(grid, bool):
        if grid < 2:
            raise ValueError(f"grid must be at least 2 points; got {grid}.")
        a, b = (times.min(), times.max()) if domain is None else domain
        if a == b:
            raise ValueError("All times are equal: a grid needs a range of times.")
        points = np.linspace(a, b, int(grid))
    else:
        points = np.asarray(grid, dtype=np.float64)
        if points.ndim != 1 or points.size < 2 or not np.all(np.isfinite(points)) or np.any(
            np.diff(points) <= 0
        ):
            raise ValueError(
                "grid must be None (the union of the observed times), a number of "
                "evenly spaced points, or a 1-D strictly increasing array of at "
                "least 2 finite times."
            )
    return points, _snap(times, points)


def _check_duplicates(keys, label_of):
    """Each (sample[, channel], time) at most once."""
    order = np.lexsort(keys[::-1])
    stacked = [k[order] for k in keys]
    same = np.ones(order.size - 1, dtype=bool) if order.size > 1 else np.zeros(0, bool)
    for k in stacked:
        same &= k[1:] == k[:-1]
    if same.any():
        first = order[int(np.flatnonzero(same)[0])]
        raise ValueError(
            f"{label_of(first)} appears more than once; give each (sample, time) "
            "pair once (average or drop repeated readings first)."
        )


def _assemble(sample, times, values, n_samples, label, *, grid, domain, time_scale,
              channel=None, channel_names=None):
    if time_scale not in TIME_SCALES:
        raise ValueError(f"time_scale must be one of {TIME_SCALES}; got {time_scale!r}.")
    values = np.asarray(values, dtype=np.float64)
    if np.isinf(values).any():
        raise ValueError("Values must be finite or NaN (not observed); got inf.")
    if time_scale == "relative":
        times = _relative(times, sample, n_samples, label)
        domain = None if domain is None else (0.0, 1.0)
    n_channels = 1 if channel is None else len(channel_names)
    channel = np.zeros(sample.size, dtype=np.intp) if channel is None else channel
    observed = ~np.isnan(values)
    seen = np.zeros((n_samples, n_channels), dtype=bool)
    seen[sample[observed], channel[observed]] = True
    missing = np.argwhere(~seen)
    if missing.size:
        i, c = missing[0]
        which = "" if channel_names is None else f" of channel {_plain(channel_names[c])!r}"
        raise ValueError(
            f"Sample {label(i)!r} has no observed values{which}: a curve needs at "
            "least one observation (drop the sample"
            + (", or give every sample every channel)." if channel_names else ").")
        )
    blocks, grids = [], []
    for c in range(n_channels):
        keep = observed & (channel == c)
        points, column = _resolve_grid(grid, times[keep], domain)
        if n_samples * points.size > MAX_VALUES:
            raise ValueError(
                f"The padded matrix would hold {n_samples} x {points.size} values "
                f"(more than {MAX_VALUES:.0e}); pass a coarser grid (for example "
                "grid=200) to bin the observations."
            )
        cell = sample[keep] * points.size + column
        total = np.bincount(cell, values[keep], minlength=n_samples * points.size)
        count = np.bincount(cell, minlength=n_samples * points.size)
        with np.errstate(invalid="ignore", divide="ignore"):
            blocks.append((total / count).reshape(n_samples, points.size))
        grids.append(points)
    return blocks, grids


def _frame(blocks, grids, ids, index_name, channel_names):
    import pandas as pd

    index = pd.Index(ids, name=index_name)
    if channel_names is None:
        return pd.DataFrame(blocks[0], index=index, columns=pd.Index(grids[0], name="time"))
    columns = pd.MultiIndex.from_tuples(
        [(name, t) for name, g in zip(channel_names, grids) for t in g],
        names=["channel", "time"],
    )
    return pd.DataFrame(np.hstack(blocks), index=index, columns=columns)


def _result(blocks, grids, ids, index_name, channel_names, as_frame):
    if channel_names is None:
        X = _frame(blocks, grids, ids, index_name, None) if as_frame else blocks[0]
        return Bunch(X=X, grid=grids[0], sample_ids=ids)
    X = _frame(blocks, grids, ids, index_name, channel_names) if as_frame else np.hstack(blocks)
    bounds = np.cumsum([0] + [g.size for g in grids])
    return Bunch(
        X=X,
        grid={name: g for name, g in zip(channel_names, grids)},
        columns={name: slice(int(bounds[c]), int(bounds[c + 1]))
                 for c, name in enumerate(channel_names)},
        channels=list(channel_names),
        sample_ids=ids,
    )


_RETURNS = """
    Returns
    -------
    curves : :class:`~sklearn.utils.Bunch`
        ``X``
            ndarray of shape (n_samples, n_points): one row per sample (in order
            of first appearance), NaN where the sample was not observed; with
            ``as_frame=True`` a pandas DataFrame indexed by sample id whose
            numeric column labels are the grid, so estimators read the grid
            from it. With channels, the channels' blocks side by side (a
            DataFrame with (channel, time) column labels: ``X[channel]`` is
            one channel's curves with its own time labels).
        ``grid``
            ndarray of shape (n_points,): pass it as ``grid=`` to the
            estimators. With channels, a dict channel -> grid.
        ``sample_ids``
            ndarray of shape (n_samples,): the sample of each row.
        ``columns``, ``channels``
            With channels only: a dict channel -> slice of the columns of
            ``X``, and the channel names in order.
"""

_GRID_RULE = """
    grid : None, int or array-like, default=None
        Where values go. None: the union of the observed times (of each
        channel), so no value moves. An int: that many evenly spaced points
        over ``domain`` (or the range of the times). An array: those points.
        With an int or an array each observation is binned to its nearest
        grid point (bins end half-way between points; a time exactly
        half-way goes to the later point); several observations of one
        sample in one bin are averaged; a time more than half a step
        beyond the grid's ends is an error.
    domain : (float, float), default=None
        The declared time domain: a time outside it is an error. None
        declares none.
    time_scale : {"absolute", "relative"}, default="absolute"
        "absolute" keeps the times, so runs of different lengths end in NaN
        after their last observation. "relative" maps each sample's times
        onto [0, 1] by its own first and last time (a run's share of its
        length), so runs of different lengths line up start to end; each
        sample then needs two distinct times. ``domain`` is checked on the
        absolute times.
    as_frame : bool, default=False
        Return ``X`` as a pandas DataFrame (needs pandas).
"""


def curves_from_table(data, *, sample="sample", time="time", value="value", channel=None,
                      grid=None, domain=None, time_scale="absolute", as_frame=False):
    """Curves from a long table: one row per observation.

    Parameters
    ----------
    data : pandas DataFrame, polars DataFrame or mapping of 1-D arrays
        The table: a column of sample ids, a column of times, a column of
        values and optionally a column of channel names. A NaN value is an
        unobserved point.
    sample, time, value : str, default="sample", "time", "value"
        Names of those columns.
    channel : str, default=None
        Name of the column of channel names (several signals per sample).
        Every sample must have observations of every channel; each channel
        gets its own grid.
    %(grid_rule)s
    %(returns)s

    Raises
    ------
    ValueError
        A column is missing; a time is not finite or lies outside ``domain``;
        a (sample, time[, channel]) pair appears twice; a sample (or one of
        its channels) has no observed value.

    See Also
    --------
    curves_from_arrays : The same from per-sample arrays of times and values.
    skfunc.decomposition.SparseFunctionalPCA : Components of curves seen at a
        few times each.
    skfunc.preprocessing.CurveSmoother : Fills gaps of densely observed curves.

    Examples
    --------
    Invented hand-held pyrometer readings of three kiln runs (°C):

    >>> from skfunc.irregular import curves_from_table
    >>> table = {"run": ["a", "a", "b", "b", "b", "c", "c"],
    ...          "minute": [0, 300, 0, 150, 300, 150, 450],
    ...          "temp": [25.0, 1190.0, 24.0, 700.0, 1210.0, 690.0, 800.0]}
    >>> curves = curves_from_table(table, sample="run", time="minute", value="temp")
    >>> curves.grid
    array([  0., 150., 300., 450.])
    >>> curves.X
    array([[  25.,   nan, 1190.,   nan],
           [  24.,  700., 1210.,   nan],
           [  nan,  690.,   nan,  800.]])
    >>> curves.sample_ids.tolist()
    ['a', 'b', 'c']
    """
    ids = _column(data, sample, "sample")
    times = _column(data, time, "time")
    values = _column(data, value, "value")
    lengths = {ids.shape, times.shape, values.shape}
    if len(lengths) != 1 or ids.ndim != 1:
        raise ValueError(
            "The sample, time and value columns must be 1-D and of one length; got "
            f"shapes {ids.shape}, {times.shape}, {values.shape}."
        )
    _check_no_missing_ids(ids, "sample")
    unique, first, sample_index = np.unique(ids, return_index=True, return_inverse=True)
    order = np.argsort(first, kind="stable")
    rank = np.empty_like(order)
    rank[order] = np.arange(order.size)
    sample_index = rank[sample_index.ravel()]
    sample_ids = unique[order]
    times = _check_times(times, domain, lambda r: f"Row {r} (sample {_plain(ids[r])!r})")
    channel_index = channel_names = None
    keys = [sample_index, times]
    if channel is not None:
        channels = _column(data, channel, "channel")
        if channels.shape != ids.shape:
            raise ValueError("The channel column must have one entry per row.")
        _check_no_missing_ids(channels, "channel")
        names, cfirst, channel_index = np.unique(channels, return_index=True,
                                                 return_inverse=True)
        corder = np.argsort(cfirst, kind="stable")
        crank = np.empty_like(corder)
        crank[corder] = np.arange(corder.size)
        channel_index = crank[channel_index.ravel()]
        channel_names = names[corder].tolist()
        keys = [sample_index, channel_index, times]

    def row_label(r):
        where = f" of channel {_plain(channels[r])!r}" if channel is not None else ""
        return f"Row {r}: sample {_plain(ids[r])!r} at time {_plain(times[r])!r}{where}"

    _check_duplicates(keys, row_label)
    blocks, grids = _assemble(
        sample_index, times, values, sample_ids.size, lambda i: _plain(sample_ids[i]), grid=grid,
        domain=domain, time_scale=time_scale, channel=channel_index,
        channel_names=channel_names,
    )
    return _result(blocks, grids, sample_ids, sample, channel_names, as_frame)


def _check_no_missing_ids(ids, what):
    if ids.dtype.kind == "f" and np.isnan(ids).any():
        raise ValueError(f"The {what} column holds NaN at row {int(np.argmax(np.isnan(ids)))}; "
                         f"every observation needs a {what}.")
    if ids.dtype.kind == "O":
        bad = [i for i, v in enumerate(ids) if v is None or (isinstance(v, float) and v != v)]
        if bad:
            raise ValueError(f"The {what} column holds a missing id at row {bad[0]}; every "
                             f"observation needs a {what}.")


def curves_from_arrays(times, values, *, sample_ids=None, channels=None, grid=None,
                       domain=None, time_scale="absolute", as_frame=False):
    """Curves from per-sample arrays of times and values of different lengths.

    Parameters
    ----------
    times : sequence of array-like, each of shape (n_observations_i,)
        The observation times of each sample.
    values : sequence of array-like, each of shape (n_observations_i,) or
        (n_observations_i, n_channels)
        The values at those times; 2-D for several channels logged together
        (the same number of channels for every sample). NaN is an
        unobserved value.
    sample_ids : array-like of shape (n_samples,), default=None
        Ids of the samples; None numbers them 0, 1, ...
    channels : sequence of str, default=None
        Names of the channels of 2-D values; None numbers them.
    %(grid_rule)s
    %(returns)s

    Raises
    ------
    ValueError
        ``times`` and ``values`` differ in length or shape; a sample has no
        observed value (or none of one channel); samples have different
        numbers of channels; a time is not finite, repeats within a sample,
        or lies outside ``domain``.

    See Also
    --------
    curves_from_table : The same from a long table.

    Examples
    --------
    Two invented firing runs of different lengths (hours, °C), compared on
    absolute time and as a share of each run:

    >>> import numpy as np
    >>> from skfunc.irregular import curves_from_arrays
    >>> times = [[0, 2, 4, 6], [0, 4, 8]]
    >>> temps = [[25, 600, 1200, 400], [25, 1200, 300]]
    >>> curves_from_arrays(times, temps).X
    array([[  25.,  600., 1200.,  400.,   nan],
           [  25.,   nan, 1200.,   nan,  300.]])
    >>> relative = curves_from_arrays(times, temps, time_scale="relative", grid=3)
    >>> relative.grid
    array([0. , 0.5, 1. ])
    >>> relative.X
    array([[  25.,  900.,  400.],
           [  25., 1200.,  300.]])
    """
    if isinstance(times, np.ndarray) and times.ndim == 2:
        times = list(times)
    if isinstance(values, np.ndarray) and values.ndim in (2, 3) and len(values) == len(times):
        values = list(values)
    try:
        n_samples = len(times)
        n_values = len(values)
    except TypeError as exc:
        raise TypeError("times and values must be sequences of per-sample arrays.") from exc
    if n_samples != n_values:
        raise ValueError(
            f"times has {n_samples} samples but values has {n_values}; give one array "
            "of times and one of values per sample."
        )
    if n_samples == 0:
        raise ValueError("times and values are empty: there are no samples.")
    ids = np.arange(n_samples) if sample_ids is None else np.asarray(sample_ids)
    if ids.shape != (n_samples,):
        raise ValueError(f"sample_ids must have one id per sample ({n_samples}); got "
                         f"shape {ids.shape}.")
    t_list, v_list, width = [], [], None
    for i, (t, v) in enumerate(zip(times, values)):
        t = np.asarray(t, dtype=np.float64)
        v = np.asarray(v, dtype=np.float64)
        if t.ndim != 1:
            raise ValueError(
                f"times of sample {_plain(ids[i])!r} must be 1-D; got shape {t.shape}."
            )
        if t.size == 0:
            raise ValueError(f"Sample {_plain(ids[i])!r} has no observations: a curve needs at "
                             "least one (drop the sample).")
        if v.ndim not in (1, 2) or v.shape[0] != t.size:
            raise ValueError(
                f"Sample {_plain(ids[i])!r} has {t.size} times but values of shape {v.shape}; "
                "give one value (or one row of channel values) per time."
            )
        w = 0 if v.ndim == 1 else v.shape[1]
        if width is None:
            width = w
        elif w != width:
            raise ValueError(
                f"Sample {_plain(ids[i])!r} has {w or 'no'} channel column(s) but sample "
                f"{_plain(ids[0])!r} has {width or 'none'}: every sample needs the same "
                "channels."
            )
        t_list.append(t)
        v_list.append(v)
    counts = np.array([t.size for t in t_list])
    sample = np.repeat(np.arange(n_samples), counts)
    flat_t = np.concatenate(t_list)
    _check_times(flat_t, domain, lambda r: f"Sample {_plain(ids[sample[r]])!r}")
    _check_duplicates([sample, flat_t],
                      lambda r: f"Sample {_plain(ids[sample[r]])!r} at time {_plain(flat_t[r])!r}")
    channel_index = channel_names = None
    flat_v = np.concatenate(v_list)
    if width:
        if channels is None:
            channel_names = list(range(width))
        else:
            channel_names = list(channels)
            if len(channel_names) != width:
                raise ValueError(f"channels names {len(channel_names)} channel(s) but the "
                                 f"values have {width} columns.")
        sample = np.repeat(sample, width)
        flat_t = np.repeat(flat_t, width)
        channel_index = np.tile(np.arange(width), flat_v.shape[0])
        flat_v = flat_v.ravel()
    elif channels is not None:
        raise ValueError("channels names the columns of 2-D values; the values are 1-D.")
    blocks, grids = _assemble(
        sample, flat_t, flat_v, n_samples, lambda i: _plain(ids[i]), grid=grid, domain=domain,
        time_scale=time_scale, channel=channel_index, channel_names=channel_names,
    )
    return _result(blocks, grids, ids, "sample", channel_names, as_frame)


for _func in (curves_from_table, curves_from_arrays):
    _func.__doc__ = _func.__doc__.replace("    %(grid_rule)s\n", _GRID_RULE.lstrip("\n")).replace(
        "    %(returns)s\n", _RETURNS)
