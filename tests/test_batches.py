"""``skfunc.utils.partial_fit_batches``: fitting from a memory-mapped file or
any iterable of batches, its progress output and its errors."""

import re

import numpy as np
import pandas as pd
import pytest
from sklearn.decomposition import IncrementalPCA
from sklearn.linear_model import SGDRegressor

from skfunc.datasets import make_smooth_regression
from skfunc.decomposition import FunctionalPCA
from skfunc.linear_model import ConcurrentFunctionRidge, FunctionalRidge
from skfunc.utils import partial_fit_batches

GRID = np.linspace(0, 1, 101)


@pytest.fixture
def data():
    X, y = make_smooth_regression(600, grid=GRID, random_state=0)[:2]
    return X, y


@pytest.fixture
def mapped(data, tmp_path):
    path = tmp_path / "curves.npy"
    np.save(path, data[0])
    return np.load(path, mmap_mode="r"), path


def _relative(a, b):
    return np.linalg.norm(a - b) / np.linalg.norm(b)


@pytest.mark.slow
def test_memory_mapped_file_gives_the_in_memory_fit(data, mapped):
    # Batches of a memory-mapped .npy give the fit on all rows: the
    # statistics are sums, so only their order differs (1e-10 relative).
    X, y = data
    Xm, _ = mapped
    weights = np.random.default_rng(1).uniform(0.5, 2.0, X.shape[0])
    pca = partial_fit_batches(FunctionalPCA(3, basis="bspline"), Xm, batch_size=70)
    whole = FunctionalPCA(3, basis="bspline").fit(X)
    assert pca.n_samples_seen_ == X.shape[0]
    assert _relative(pca.transform(X), whole.transform(X)) < 1e-10
    ridge = partial_fit_batches(FunctionalRidge(alpha=1e-4), Xm, y,
                                sample_weight=weights, batch_size=70)
    whole = FunctionalRidge(alpha=1e-4).fit(X, y, sample_weight=weights)
    assert _relative(ridge.predict(X), whole.predict(X)) < 1e-10


def test_batches_are_those_of_incremental_pca(data, mapped):
    # scikit-learn's IncrementalPCA.fit cuts X into batch_size rows
    # (sklearn.utils.gen_batches) and calls partial_fit on each; the helper
    # must hand it the same batches, in order: any other cut changes the
    # incremental SVD's rounding only, but a dropped, repeated or reordered
    # batch changes n_samples_seen_, the mean or the components.
    X, _ = data
    Xm, _ = mapped
    ours = partial_fit_batches(IncrementalPCA(4), Xm, batch_size=90)
    theirs = IncrementalPCA(4, batch_size=90).fit(X)
    assert ours.n_samples_seen_ == theirs.n_samples_seen_
    np.testing.assert_allclose(ours.mean_, theirs.mean_, rtol=1e-12)
    np.testing.assert_allclose(np.abs(ours.components_), np.abs(theirs.components_),
                               rtol=1e-8, atol=1e-12)


def test_other_estimators_get_partial_fit_on_every_batch(data):
    # an estimator outside skfunc is fed through its own partial_fit:
    # SGDRegressor's weights after the helper equal those after the same
    # partial_fit calls made by hand (scikit-learn's own online fit)
    X, y = data
    Z = X[:, ::10]
    ours = partial_fit_batches(SGDRegressor(random_state=0), Z, y, batch_size=100)
    theirs = SGDRegressor(random_state=0)
    for start in range(0, Z.shape[0], 100):
        theirs.partial_fit(Z[start:start + 100], y[start:start + 100])
    np.testing.assert_array_equal(ours.coef_, theirs.coef_)


def test_iterables_of_batches(data):
    X, y = data
    whole = FunctionalRidge(alpha=1e-4).fit(X, y)
    pieces = np.array_split(np.arange(X.shape[0]), 4)
    from_list = partial_fit_batches(FunctionalRidge(alpha=1e-4),
                                    [(X[r], y[r]) for r in pieces])
    from_generator = partial_fit_batches(FunctionalRidge(alpha=1e-4),
                                         ((X[r], y[r], None) for r in pieces))
    for fitted in (from_list, from_generator):
        assert _relative(fitted.predict(X), whole.predict(X)) < 1e-10
    curves = partial_fit_batches(FunctionalPCA(2), (X[r] for r in pieces))
    assert curves.n_samples_seen_ == X.shape[0]


def test_data_frame_rows(data):
    X, _ = data
    frame = pd.DataFrame(X, columns=GRID)
    fitted = partial_fit_batches(FunctionalPCA(2), frame, batch_size=250)
    np.testing.assert_allclose(fitted.grid_, GRID)
    assert _relative(fitted.transform(X), FunctionalPCA(2, grid=GRID).fit(X).transform(X)) < 1e-10


def _mapped_resident_bytes(path):
    """Resident bytes of this process's mappings of ``path`` (Linux's
    /proc/self/smaps, proc(5))."""
    total, inside = 0, False
    with open("/proc/self/smaps") as smaps:
        for line in smaps:
            if re.match(r"^[0-9a-f]+-[0-9a-f]+ ", line):
                inside = line.rstrip().endswith(str(path))
            elif inside and line.startswith("Rss:"):
                total += int(line.split()[1]) * 1024
    return total


@pytest.mark.slow
def test_pages_of_finished_batches_are_released(tmp_path):
    # Reading a memory-mapped file maps its pages into the process, where they
    # count as resident memory until the mapping goes (proc(5): Rss of the
    # mapping). The helper drops each finished batch's pages, so after a fit
    # over an 8 MB file only pages at batch boundaries remain: below 1/4 of
    # the file here (one page per boundary: 10 x 4 KiB). Without the release
    # every page read stays resident (the whole file).
    pytest.importorskip("mmap")
    try:
        open("/proc/self/smaps").close()
    except OSError:
        pytest.skip("needs Linux's /proc/self/smaps")
    path = tmp_path / "big.npy"
    np.save(path, np.random.default_rng(0).standard_normal((2000, 500)))
    Xm = np.load(path, mmap_mode="r")
    np.asarray(Xm[:, 0]).sum()  # touch every page: all resident
    assert _mapped_resident_bytes(path) > 0.9 * Xm.nbytes
    partial_fit_batches(FunctionalPCA(2, basis="bspline"), Xm, batch_size=200)
    assert _mapped_resident_bytes(path) < 0.25 * Xm.nbytes


def test_verbose_prints_progress_with_time_left(data, capsys):
    X, _ = data
    partial_fit_batches(FunctionalPCA(2), X, batch_size=200)
    assert capsys.readouterr().out == ""  # quiet by default
    partial_fit_batches(FunctionalPCA(2), X, batch_size=200, verbose=1)
    lines = capsys.readouterr().out.splitlines()
    assert len(lines) == 4  # one per batch, then the summary
    assert lines[0].startswith("[partial_fit_batches] batch 1/3: 200/600 rows")
    assert all("left" in line for line in lines[:3])
    assert "fitted on 600 rows" in lines[-1]
    # an iterable of unknown length: no estimate of the time left
    partial_fit_batches(FunctionalPCA(2), (X[i:i + 300] for i in (0, 300)), verbose=True)
    lines = capsys.readouterr().out.splitlines()
    assert lines[1].startswith("[partial_fit_batches] batch 2: 600 rows")
    assert "left" not in lines[1]


@pytest.mark.parametrize("call, error, match", [
    (lambda X, y: partial_fit_batches(ConcurrentFunctionRidge(), X, X), TypeError,
     "partial_fit"),
    (lambda X, y: partial_fit_batches(FunctionalPCA(2), [X], y), ValueError,
     "y and sample_weight"),
    (lambda X, y: partial_fit_batches(FunctionalPCA(2), [X], batch_size=3), ValueError,
     "batch_size"),
    (lambda X, y: partial_fit_batches(FunctionalPCA(2), X, batch_size=0), ValueError,
     "batch_size"),
    (lambda X, y: partial_fit_batches(FunctionalPCA(2), X, verbose=-1), ValueError,
     "verbose"),
    (lambda X, y: partial_fit_batches(FunctionalPCA(2), X[0]), ValueError, "2-D"),
    (lambda X, y: partial_fit_batches(FunctionalRidge(), X, y[:5]), ValueError,
     "y has 5 rows"),
    (lambda X, y: partial_fit_batches(FunctionalPCA(2), []), ValueError, "no batch"),
    (lambda X, y: partial_fit_batches(FunctionalPCA(2), "curves.npy"), TypeError,
     "iterable of batches"),
    (lambda X, y: partial_fit_batches(FunctionalRidge(), [(X, y, None, None)]),
     ValueError, "tuple of 4"),
])
def test_bad_arguments(data, call, error, match):
    X, y = data
    with pytest.raises(error, match=match):
        call(X, y)
