"""Fleet-scale replay on a dask.distributed cluster, exact.

Every partition (time-ordered, partitions in time order) becomes an exact
chunk state on the worker holding it (:func:`tenmin.chunk_state`); the states
are merged by a tree reduction (:func:`tenmin.merge`, ``split_every`` at a
time, always consecutive neighbours, so the result does not depend on the
tree's shape); one task finishes the merged state on one worker.

Why the screening stays exact: the cross-interval tests (flat line, and the
recovery counts) need every earlier interval, in order. A chunk state
therefore keeps each complete interval's records with their own flags only,
and the open intervals at its ends as samples; the final task screens all
intervals in time order with one screener, as the one-pass station does.
A state is small: the records of its complete intervals (128 bytes a channel
each) plus the samples of at most two open intervals.
"""

from __future__ import annotations

from typing import Sequence

import tenmin


def _part_state(df, station, time):
    return tenmin.chunk_state(df, station, time=time)


def _file_state(path, station):
    # Read on the worker by the command's own readers (any declared layout).
    return tenmin.chunk_state(path, station)


def _merge(states, station):
    return tenmin.merge(states, station)


def _finish(state, station):
    return tenmin.finish(state, station).csv


def replay(data, station, *, time: str = "time", split_every: int = 8, client=None) -> "tenmin.Records":
    """Replays a dask DataFrame (partitions in time order) or a list of
    samples files (in time order; any layout the station file declares, read
    on the workers by the command's own readers) on the cluster of
    ``client`` (the current one by default); returns the records."""
    import dask
    from dask.distributed import default_client

    station = tenmin.Station(station)
    if isinstance(data, Sequence) and not isinstance(data, str):
        states = [dask.delayed(_file_state)(p, station) for p in data]
    else:
        states = [dask.delayed(_part_state)(p, station, time) for p in data.to_delayed()]
    if not states:
        raise tenmin.TenminError("no partitions to replay")
    k = max(2, split_every)
    while len(states) > 1:
        states = [dask.delayed(_merge)(states[i : i + k], station) for i in range(0, len(states), k)]
    final = dask.delayed(_finish)(states[0], station)
    client = client or default_client()
    return tenmin.Records(client.compute(final).result())
