"""Every record judged again: its verdict recomputed from its results and its package.

The chain proves a record is what was written, not that what was written is true: someone
who rewrites the whole chain (or writes a record by hand) can store "passed" beside a
failing reading. So the audit and ``verify`` do not trust a stored verdict: they run the
record's results through ``evaluate`` against the package the record names (the issued
JSON twin whose hash the record carries), and a stored verdict that disagrees, in the
chain's ``verdict`` column or in the payload's evaluation, is an integrity failure. So is
a record that cannot be judged again although its package was given (results that no
longer read back or no longer fit, a package hash that differs). A record whose package
was not given is counted, not judged. Pure: the shell reads the store and the packages.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from workpack.electrical.standards import CodeSet
from workpack.evaluate import check_results, evaluate
from workpack.model.evaluation import Evaluation
from workpack.model.package import WorkPackage
from workpack.records import PayloadError, read_payload
from workpack.store._chain import package_sha256

if TYPE_CHECKING:
    from workpack.store import Record


@dataclass(frozen=True)
class Disagreement:
    """A record whose stored verdict is not what its results and package give, or that
    could not be judged again; ``message`` is one line naming the record."""

    sequence: int
    package_id: str
    stored: str
    judged: str | None  # None: it could not be judged again
    message: str


@dataclass(frozen=True)
class Rejudging:
    """What judging every record again found."""

    judged: int  # records judged again
    disagreements: tuple[Disagreement, ...]
    not_judged: tuple[int, ...]  # records whose package was not given
    # The evaluation judged again, by record number, for the records that could be.
    evaluations: Mapping[int, Evaluation] = field(default_factory=dict)

    @property
    def ok(self) -> bool:
        return not self.disagreements

    @property
    def summary(self) -> str:
        """One line: how many were judged again and how many disagree."""
        noun = "record" if self.judged == 1 else "records"
        said = f"verdicts judged again from results and packages: {self.judged} {noun}"
        if self.disagreements:
            said += f", {len(self.disagreements)} disagree with what is stored"
        else:
            said += ", all agree"
        if self.not_judged:
            left = len(self.not_judged)
            said += (f"; {left} record{'' if left == 1 else 's'} not judged (package not "
                     "given)")
        return said


def rejudge(records: Iterable[Record], packages: Mapping[str, WorkPackage],
            standards: Mapping[str, CodeSet],
            hashes: Mapping[str, str] | None = None) -> Rejudging:
    """Judge every record of ``records`` again against ``packages`` (id → issued package);
    ``hashes`` (id → ``package_sha256``) where the caller has them already."""
    hashes = dict(hashes) if hashes is not None else {}
    judged = 0
    disagreements: list[Disagreement] = []
    not_judged: list[int] = []
    evaluations: dict[int, Evaluation] = {}
    for record in sorted(records, key=lambda r: r.sequence):
        package = packages.get(record.package_id)
        if package is None:
            not_judged.append(record.sequence)
            continue
        judged += 1
        digest = hashes.get(record.package_id)
        if digest is None:
            digest = hashes[record.package_id] = package_sha256(package)
        found = _judge_one(record, package, digest, standards)
        if isinstance(found, Disagreement):
            disagreements.append(found)
            continue
        evaluation, disagreement = found
        evaluations[record.sequence] = evaluation
        if disagreement is not None:
            disagreements.append(disagreement)
    return Rejudging(judged, tuple(disagreements), tuple(not_judged), evaluations)


def _judge_one(record: Record, package: WorkPackage, digest: str,
               standards: Mapping[str, CodeSet]
               ) -> Disagreement | tuple[Evaluation, Disagreement | None]:
    name = f"record {record.sequence} ({record.package_id})"

    def cannot(why: str) -> Disagreement:
        return Disagreement(record.sequence, record.package_id, record.verdict, None,
                            f"{name} cannot be judged again: {why}")

    if record.package_sha256 != digest:
        return cannot("it answers another version of the package (its package hash "
                      "differs from the issued package given)")
    try:
        payload = read_payload(record)
    except PayloadError as error:
        return cannot(str(error))
    misfits = list(check_results(package, payload.results))
    if misfits:
        where = ".".join(str(step) for step in misfits[0].path)
        return cannot(f"its results do not fit the package ({where}: {misfits[0].message})")
    evaluation = evaluate(package, payload.results, standards)
    stored = {record.verdict, payload.evaluation.verdict}
    if stored == {evaluation.verdict}:
        return evaluation, None
    said = (f"stored verdict {record.verdict!r}" if payload.evaluation.verdict == record.verdict
            else f"stored verdicts {record.verdict!r} (chain) and "
                 f"{payload.evaluation.verdict!r} (evaluation)")
    why = next((d.text for d in evaluation.deviations if d.fails), None) or next(
        (d.text for d in evaluation.deviations), None)
    because = f" ({why})" if why else ""
    return evaluation, Disagreement(
        record.sequence, record.package_id, record.verdict, evaluation.verdict,
        f"{name}: {said}, but its results judged against its package give "
        f"{evaluation.verdict!r}{because}")
