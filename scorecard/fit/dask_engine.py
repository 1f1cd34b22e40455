"""Fitting on a Dask cluster (`scorecard fit --engine dask`): the same fit, its per-row work on partitions.

The rows are cut into partitions of `partition_rows` consecutive rows; each partition lives on one worker
inside a Dask actor (`Partition`, a stateful object on the worker, called directly without the scheduler:
a boosting step is a few milliseconds of work, too short for a task per step). The actor holds its rows as a
`TableInMemory`, so every per-row sum is computed by the in-memory code on the partition's rows, and this
module only adds the partitions' answers up, in partition order:
- bins: each partition summarises its columns (`ValueSummary`: distinct values, counts, weights); the merged
  summary is exactly the in-memory one, so the bins (quantile cut points included) are identical;
- each boosting step: the partitions' gradient/hessian histograms, summed (`DaskBagSource`, a histogram
  source for `boosting.boost_terms`); the step's tree is grown here and sent back with the next request;
- the FAST pair ranking: the partitions' 2-D half histograms, summed;
- bags: each bag is its own stream of actor calls, run concurrently from threads of this process, so the
  bags' steps interleave on the workers.
The partitioning depends only on `partition_rows`, not on the number of workers, so the result does not
depend on the cluster's size. Sums of partitions differ from one in-memory sum only by floating-point
rounding (none with whole-number weights), so the model equals the in-memory one to rounding.

Only this module imports dask; the in-memory fit never loads it.
"""

from __future__ import annotations

import gc
import itertools
import logging
from concurrent.futures import ThreadPoolExecutor

import numpy as np

try:
    import distributed
except ImportError as exc:  # the [dask] extra is not installed
    raise ImportError(
        "--engine dask needs the Dask extra: pip install 'wardpoints-scorecard[dask]' (dask and distributed)"
    ) from exc

from scorecard.fit.bagging import TableInMemory
from scorecard.fit.binning import ValueSummary

PARTITION_ROWS = 250_000  # rows per partition: big enough that a step's work dwarfs a call's ~1 ms


class Partition:
    """One partition of the rows, kept on a worker: its raw columns until coded, then a `TableInMemory`, and
    the open bag sources (one per bag and stage) keyed by the client."""

    def __init__(self, columns, y, w):
        self.columns, self.y, self.w = columns, y, w
        self.table = None
        self.sources = {}

    def summaries(self):
        return [ValueSummary.of(col, self.w) for col in self.columns]

    def code(self, bins):
        self.table = TableInMemory([b.codes(col) for b, col in zip(bins, self.columns)], self.y, self.w)
        self.columns = None  # the codes are all the fit needs from here on

    def outcome_and_weights(self):
        return self.y, self.w

    def slot_weights(self, n_slots):
        return self.table.slot_weights(n_slots)

    def open_one_feature(self, key, rows, n_slots):
        self.sources[key] = self.table.one_feature_source(rows, n_slots)
        return self._opened(key)

    def open_pairs(self, key, rows, layouts, intercept, shapes):
        self.sources[key] = self.table.pair_source(rows, layouts, intercept, shapes)
        return self._opened(key)

    def _opened(self, key):
        source = self.sources[key]
        return source.totals(), source.fixed_histograms(), (len(source.y_held), float(np.sum(source.w_held)))

    def serve(self, requests):
        """Answer a batch of bag requests, one per bag: (key, steps to apply first, method, arguments)."""
        answers = []
        for key, moves, method, arguments in requests:
            source = self.sources[key]
            for j, delta in moves:
                source.move(j, delta)
            if method == "finish":
                self.sources.pop(key).finish()
                answers.append(None)
            elif method == "held_loss":  # as its two sums, to be added over partitions
                answers.append(source.held_sums() if len(source.y_held) else (0.0, 0.0))
            else:
                answers.append(getattr(source, method)(*arguments))
        return answers

    def pair_sums(self, intercept, shapes, coarse_maps, widths, half):
        return self.table.pair_sums(intercept, shapes, coarse_maps, widths, half)

    def pair_weights(self, layouts):
        return self.table.pair_weights(layouts)

    def out_of_bag(self, bag_models, layouts, held):
        return self.table.out_of_bag(bag_models, layouts, held)


def _add(parts):
    """Sum of the partitions' arrays, in partition order (so the same partitions always give the same bits)."""
    total = parts[0].copy() if isinstance(parts[0], np.ndarray) else parts[0]
    for part in parts[1:]:
        total = total + part
    return total


class DaskEngine:
    """A connection to a Dask cluster to fit on: a running scheduler at `scheduler` (host:port), or, without
    one, a local cluster of `workers` single-threaded worker processes started here and stopped on close."""

    def __init__(self, scheduler: str | None = None, workers: int = 2, partition_rows: int = PARTITION_ROWS,
                 timeout: float = 10.0, processes: bool = True):
        self.partition_rows = int(partition_rows)
        self.cluster = None
        if scheduler:
            self.client = _connected_client(scheduler, timeout)
        else:
            self.cluster = distributed.LocalCluster(
                n_workers=int(workers), threads_per_worker=1, processes=processes, dashboard_address=None,
                silence_logs=logging.ERROR,
            )
            self.client = distributed.Client(self.cluster, timeout=timeout)
        self.workers = sorted(self.client.scheduler_info()["workers"])
        if not self.workers:
            self.close()
            raise OSError(f"the Dask scheduler at {scheduler} has no workers")

    def close(self) -> None:
        self.client.close()
        if self.cluster is not None:
            self.cluster.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    def table(self, columns, y, w) -> "ClusterColumns":
        """The fit's columns cut into partitions, each sent to a worker (round robin) inside a `Partition`."""
        n = len(y)
        bounds = list(range(0, n, self.partition_rows)) + [n]
        actors = []
        for i, (a, b) in enumerate(zip(bounds[:-1], bounds[1:])):
            worker = self.workers[i % len(self.workers)]
            data = self.client.scatter(([c[a:b] for c in columns], y[a:b], w[a:b]), workers=[worker], direct=True)
            actors.append(self.client.submit(_new_partition, data, actor=True, workers=[worker], pure=False))
        return ClusterColumns(self, [f.result() for f in actors], bounds)


def _connected_client(scheduler: str, timeout: float) -> "distributed.Client":
    """A client of the running scheduler, or the error it gave, re-raised with the same type and message.

    A Client that fails to connect stays half made until the garbage collector finds it, and its __del__ then
    closes it: seen to deadlock when that happened inside a later Client's start (both wait on the shared
    event-loop runner). The failure's traceback, which holds the half-made client, is dropped here and the
    collector run at once, so the close happens now, with no other client starting."""
    failure = None
    try:
        return distributed.Client(scheduler, timeout=timeout)
    except (OSError, ValueError, TypeError) as exc:  # refused, timed out, or not an address
        failure = (type(exc), str(exc))
    gc.collect()
    kind, message = failure
    raise (kind if kind in (OSError, TimeoutError, ValueError, TypeError) else OSError)(message)


def _new_partition(data):
    return Partition(*data)


class ClusterColumns:
    """The partitions before and after binning (a context manager that lets the actors go at the end)."""

    def __init__(self, engine: DaskEngine, actors, bounds):
        self.engine, self.actors, self.bounds = engine, actors, bounds

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.actors = []

    def call(self, method, *args, each=None):
        """Call `method` on every partition at once; `each(i)` gives partition i its own arguments."""
        futures = [getattr(a, method)(*(each(i) if each else args)) for i, a in enumerate(self.actors)]
        return [f.result() for f in futures]

    def summaries(self) -> list[ValueSummary]:
        parts = self.call("summaries")
        return [ValueSummary.merge([p[j] for p in parts]) for j in range(len(parts[0]))]

    def coded(self, bins) -> "DaskTable":
        self.call("code", bins)
        return DaskTable(self)


class DaskTable:
    """The fit's table on the cluster: the questions `bagging.fit_additive_terms` asks of a `TableInMemory`,
    answered by summing the partitions' answers."""

    def __init__(self, columns: ClusterColumns):
        self.parts = columns
        pieces = columns.call("outcome_and_weights")
        self.y = np.concatenate([p[0] for p in pieces])
        self.w = np.concatenate([p[1] for p in pieces])
        self._keys = itertools.count()

    def outcome(self):
        return self.y

    def weights(self):
        return self.w

    def local(self, rows, i):
        """The rows (global, sorted) that fall in partition i, as positions within it."""
        a, b = self.parts.bounds[i], self.parts.bounds[i + 1]
        return rows[np.searchsorted(rows, a):np.searchsorted(rows, b)] - a

    def slot_weights(self, n_slots):
        parts = self.parts.call("slot_weights", n_slots)
        return [_add([p[j] for p in parts]) for j in range(len(n_slots))]

    def one_feature_source(self, rows, n_slots):
        key = next(self._keys)
        opened = self.parts.call("open_one_feature", each=lambda i: (key, self._local_rows(rows, i), n_slots))
        return DaskBagSource(self.parts, key, n_slots, opened)

    def pair_source(self, rows, layouts, intercept, shapes):
        key = next(self._keys)
        opened = self.parts.call("open_pairs", each=lambda i: (key, self._local_rows(rows, i), layouts, intercept, shapes))
        return DaskBagSource(self.parts, key, [lay.shape[0] * lay.shape[1] + 1 for lay in layouts], opened)

    def _local_rows(self, rows, i):
        fit_rows, held_rows = rows
        return self.local(fit_rows, i), self.local(held_rows, i)

    def pair_sums(self, intercept, shapes, coarse_maps, widths, half):
        b = self.parts.bounds
        parts = self.parts.call("pair_sums", each=lambda i: (intercept, shapes, coarse_maps, widths, half[b[i]:b[i + 1]]))
        sums = {pair: tuple(_add([p[0][pair][m] for p in parts]) for m in range(6)) for pair in parts[0][0]}
        return sums, _add([p[1] for p in parts]), _add([p[2] for p in parts])

    def pair_weights(self, layouts):
        parts = self.parts.call("pair_weights", layouts)
        return [_add([p[k] for p in parts]) for k in range(len(layouts))]

    def out_of_bag(self, bag_models, layouts, held):
        parts = self.parts.call("out_of_bag", each=lambda i: (bag_models, layouts, [self.local(h, i) for h in held]))
        return np.concatenate([p[0] for p in parts]), np.concatenate([p[1] for p in parts])

    def run_bags(self, function, common: tuple, bags: list, progress, what) -> list[dict]:
        """Every bag at once, in lockstep: each turn, every unfinished bag's next request is collected and all
        of them go to each partition in one call (so a step of 8 bags costs one call per partition, not 8).
        Results in bag order."""
        opened = [function(self, *common, bag) for bag in bags]
        sources = [source for source, _ in opened]
        requests = {i: r for i, (_, r) in enumerate(opened)}
        answers = dict.fromkeys(requests)
        results: list = [None] * len(bags)
        while requests:
            batch = {}
            for i in list(requests):
                source = sources[i]
                while True:  # answer what the client knows until the bag needs the partitions
                    try:
                        method, *arguments = requests[i].send(answers[i])
                    except StopIteration as done:
                        results[i] = done.value
                        del requests[i]
                        batch[i] = source.remote("finish", ())
                        if progress:
                            progress(f"{what}: repeat {i + 1}/{len(bags)} done, best at round {done.value['rounds']}")
                        break
                    if method in source.LOCAL:
                        answers[i] = getattr(source, method)(*arguments)
                        continue
                    batch[i] = source.remote(method, arguments)
                    break
            order = list(batch)
            replies = self.parts.call("serve", [batch[i] for i in order])
            for n, i in enumerate(order):
                answers[i] = sources[i].combine(batch[i][2], [reply[n] for reply in replies])
        return results
class DaskBagSource:
    """A histogram source (`boosting.HistogramSource`) over one bag's rows on every partition, driven by
    `DaskTable.run_bags`: the fixed figures are kept here from the opening, steps are kept until the next
    request and sent with it, and the partitions' answers are added up here."""

    LOCAL = {"totals", "fixed_histograms", "has_held", "move"}

    def __init__(self, parts: ClusterColumns, key: int, n_slots, opened):
        self.parts, self.key, self.n_slots = parts, key, list(n_slots)
        self._totals = tuple(_add([o[0][m] for o in opened]) for m in range(2))
        self._fixed = tuple([_add([o[1][m][j] for o in opened]) for j in range(len(self.n_slots))] for m in range(2))
        self._has_held = sum(o[2][0] for o in opened) > 0 and _add([o[2][1] for o in opened]) > 0
        self._moves = []

    def totals(self):
        return self._totals

    def fixed_histograms(self):
        return self._fixed

    def has_held(self):
        return self._has_held

    def move(self, j, delta):
        self._moves.append((j, delta))

    def remote(self, method, arguments) -> tuple:
        """The request for the partitions, carrying the steps taken since the last one."""
        moves, self._moves = self._moves, []
        return (self.key, moves, method, tuple(arguments))

    @staticmethod
    def combine(method, replies):
        """The partitions' replies (in partition order) to one request, added up."""
        if method == "gradient_hessian":
            return _add([r[0] for r in replies]), _add([r[1] for r in replies])
        if method == "held_loss":
            return float(_add([r[0] for r in replies]) / _add([r[1] for r in replies]))
        return None
