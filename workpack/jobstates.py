"""The jobs the status reads from a store: the job states it keeps beside the events
where they are current, else every event folded (``workpack.joblog``).

The kept states are a derived copy; ``joblog.status`` gives the same status from either
(tests/test_jobstates.py). Reading them, the status reads the open jobs, each routine
test's latest own pass and the few jobs those point to, not a year of events.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Mapping

from workpack.joblog import UNREADABLE, Job, fold, job_from_kept, status_wants
from workpack.store import RecordStore
from workpack.store._base import JobStateQuery


def jobs_for_status(store: RecordStore, day: dt.date) -> Mapping[str, Job]:
    """The jobs ``joblog.status`` needs for ``day``, by package id."""
    kept = store.job_states(JobStateQuery(for_status=True))
    if kept is None or UNREADABLE in kept:
        return fold(store.events())
    jobs: dict[str, Job] = {job.package_id: job for job in map(job_from_kept, kept)}
    wants = status_wants(jobs, day)
    if wants.package_ids or wants.items:
        more = store.job_states(JobStateQuery(package_ids=wants.package_ids,
                                              items=wants.items, since=wants.since,
                                              before=wants.before))
        if more is None or UNREADABLE in more:  # events written meanwhile by an older
            return fold(store.events())        # workpack, or not of a job's shape
        jobs.update((job.package_id, job) for job in map(job_from_kept, more))
    return jobs
