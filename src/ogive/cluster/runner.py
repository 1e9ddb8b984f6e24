"""Running the parts on a Dask cluster: map tasks, an ordered merge tree, and the
client's checks, progress, cancelling and failures.

The client submits every map task at once, and a few hundred bytes of each (its
``reach``) come back to it; the sketches stay on the workers. Merges are submitted as
soon as their inputs are accepted, ``split_every`` adjacent parts at a time, level by
level, so the tree grows while the map runs and only the root comes back: memory on
the client is a handle per task in flight, whatever the number of parts.

A CSV part is accepted only once every part of its file has reported, and only if it
began where the part before it stopped (:mod:`.ranges`); otherwise it is read again
from there. A file whose quotes never balance is read again whole, by one task.

Ctrl-C (``cancel``) or a failed task leaves holes: the finished subtrees and accepted
parts around them are merged into a partial result, and the holes are named.
"""

from __future__ import annotations

import dataclasses
import time
import uuid
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from ..read.options import ScanOptions, ScanProgress
from ..sketch import SketchSet
from . import tasks
from .head import Decisions
from .parts import Blob
from .tasks import RANGE, WHOLE, PartSpec

SPLIT_EVERY = 8
"""Parts merged by one reduce task: a tree of depth log8(parts), each merge holding at
most 8 sketch sets (benchmarks/cluster_bench.py times 10^4 of them)."""
POLL_S = 0.05
FINAL_WAIT_S = 120
"""How long a stopped scan waits for the parts already read to be merged and sent back."""

LOST = ("lost", "pending")
"""Future states of a task whose result died with its worker after it was reported done
(no exception to show: ``exception()`` is None). Dask recomputes it from its inputs, so
it is watched again, not taken for a failure (which once failed a whole scan with
"a merge of parts failed: NoneType: None" when a worker was killed mid-merge)."""

PENDING, EMPTY, HOLE = "pending", "empty", "hole"
"""A slot waiting for its part; a slot with nothing to merge (its bytes were read by
another part); a slot whose part failed or was never read."""


@dataclass
class Slot:
    spec: PartSpec
    state: str = PENDING
    leaf: Any = None
    """The map task's future."""
    reach: dict[str, Any] | None = None
    lines: int | None = None


@dataclass
class Outcome:
    """What happened besides the merged part: for the result's partial flag and warnings."""

    failures: list[str] = field(default_factory=list)
    interrupted: bool = False
    notes: list[str] = field(default_factory=list)
    done_bytes: int = 0
    done_parts: int = 0


class Runner:
    """One split scan on a connected client (see the module notes)."""

    def __init__(
        self,
        client: Any,
        specs: list[PartSpec],
        options: ScanOptions,
        decisions: Decisions,
        *,
        progress: Callable[[ScanProgress], None] | None = None,
        cancel: Callable[[], bool] | None = None,
        split_every: int = SPLIT_EVERY,
    ) -> None:
        from distributed import as_completed

        self.client = client
        self.options = options
        self.decisions = decisions
        self.progress = progress
        self.cancel = cancel
        self.split_every = max(2, split_every)
        self.run_id = uuid.uuid4().hex[:12]
        self.slots = [Slot(s) for s in specs]
        self.files: dict[str, list[int]] = {}
        for i, s in enumerate(specs):
            self.files.setdefault(s.path, []).append(i)
        self.specs_by_leaf = {s.leaf: s for s in specs}
        self.next_leaf = len(specs)
        self.levels: list[list[Any]] = [[PENDING] * len(specs)]
        while len(self.levels[-1]) > 1:
            self.levels.append([PENDING] * -(-len(self.levels[-1]) // self.split_every))
        self.roles: dict[str, tuple[str, int, int]] = {}
        """Future key -> (``reach`` or ``merge``, level or slot, index)."""
        self.queue = as_completed()
        self.out = Outcome()
        self.bytes_total = sum(s.nbytes for s in specs)
        self.rows = 0
        self.started = time.monotonic()
        self.seen: set[int] = set()

    # ------------------------------------------------------------------ submitting
    def submit_leaf(self, i: int, spec: PartSpec) -> None:
        slot = self.slots[i]
        slot.spec, slot.state, slot.reach = spec, PENDING, None
        self.specs_by_leaf[spec.leaf] = spec
        slot.leaf = self.client.submit(
            tasks.scan_part, spec, self.options, self.decisions,
            key=f"ogive-part-{self.run_id}-{spec.leaf}", retries=1, pure=False,
        )  # fmt: skip
        reach = self.client.submit(tasks.reach, slot.leaf, key=f"ogive-reach-{self.run_id}-{spec.leaf}")
        self.roles[reach.key] = ("reach", i, spec.leaf)
        self.queue.add(reach)

    def again(self, i: int, **change: Any) -> None:
        """Read slot ``i`` again as a new task (a re-read from a known record start)."""
        spec = dataclasses.replace(self.slots[i].spec, leaf=self.next_leaf, **change)
        self.next_leaf += 1
        self.submit_leaf(i, spec)

    def settle(self, level: int, j: int, value: Any) -> None:
        """Node ``j`` of ``level`` is known: submit its parent's merge once all siblings are."""
        self.levels[level][j] = value
        while level + 1 < len(self.levels):
            p = j // self.split_every
            kids = self.levels[level][p * self.split_every : (p + 1) * self.split_every]
            if any(k == PENDING for k in kids):
                return
            futures = [k for k in kids if not isinstance(k, str)]
            if not futures:
                node: Any = EMPTY
            elif len(futures) == 1:
                node = futures[0]
            else:
                node = self.client.submit(
                    tasks.combine, futures, self.options.by, self.options.max_groups,
                    key=f"ogive-merge-{self.run_id}-{level + 1}-{p}", retries=2, priority=1,
                )  # fmt: skip
                self.roles[node.key] = ("merge", level + 1, p)
                self.queue.add(node)
            level, j = level + 1, p
            self.levels[level][j] = node

    # ------------------------------------------------------------------ checking
    def on_reach(self, fut: Any, i: int, leaf: int) -> None:
        slot = self.slots[i]
        if slot.spec.leaf != leaf or slot.state != PENDING:
            return  # an earlier reading of a slot read again
        if i not in self.seen:
            self.seen.add(i)
            self.out.done_bytes += slot.spec.nbytes
            self.out.done_parts += 1
        if fut.status != "finished":
            exc = fut.exception()
            self.fail(i, f"{slot.spec.where()}: {type(exc).__name__}: {exc}")
            return
        slot.reach = fut.result()
        self.rows += slot.reach["rows"]
        self.check(slot.spec.path)

    def fail(self, i: int, message: str) -> None:
        self.out.failures.append(message)
        slot = self.slots[i]
        slot.state = HOLE
        self.settle(0, i, HOLE)
        if self.decisions.csv and slot.spec.kind == RANGE:
            # Where the next part's first record begins cannot be checked without this
            # part's end: the rest of the file is left out rather than risk a miscount.
            rest = [k for k in self.files[slot.spec.path] if k > i and self.slots[k].state == PENDING]
            for k in rest:
                self.slots[k].state = HOLE
                self.settle(0, k, HOLE)
            if rest:
                self.out.failures[-1] += " (and the rest of its file, whose records could not be checked)"

    def accept(self, i: int) -> None:
        slot = self.slots[i]
        slot.state = "accepted"
        assert slot.reach is not None
        slot.lines = slot.reach["lines"]
        self.settle(0, i, slot.leaf)

    def check(self, path: str, *, final: bool = False) -> None:
        """Accept the parts of ``path`` once each is known to begin where the one before stopped.

        A CSV file's parts are checked together, in order, once all have reported: the
        first that began elsewhere (inside a quoted field) is read again from where the
        part before it stopped, and the check waits for it; a part whose quotes did not
        balance sends the whole file to one task. ``final`` (the scan was stopped):
        accept the parts that check out so far, and read nothing again.
        """
        ids = self.files[path]
        if not self.decisions.csv:
            for i in ids:
                if self.slots[i].state == PENDING and self.slots[i].reach is not None:
                    self.accept(i)
            return
        if not final and any(self.slots[i].state == PENDING and self.slots[i].reach is None for i in ids):
            return
        good: list[int] = []
        expected = 0
        for i in ids:
            slot = self.slots[i]
            if slot.state != PENDING:
                continue  # accepted before (a final check), or read by another part
            if slot.reach is None:
                break
            first, stop, _ = slot.reach["reach"]
            if first != expected:
                if not final:
                    self.again(i, start=expected, exact=True)
                    return
                break
            if self.trouble(i):
                if not final:
                    self.whole(path)
                    return
                break
            good.append(i)
            expected = stop
        for i in good:
            self.accept(i)

    def trouble(self, i: int) -> bool:
        """A part of a cut CSV file whose quotes did not balance (see :mod:`.ranges`)."""
        slot = self.slots[i]
        r = slot.reach
        return slot.spec.kind == RANGE and r is not None and bool(r["reach"][2] or r["quote_chunks"])

    def whole(self, path: str) -> None:
        """Read ``path`` again as one task, as a single-process scan reads it."""
        ids = self.files[path]
        for k in ids[1:]:
            self.slots[k].state = EMPTY
            self.settle(0, k, EMPTY)
        first = self.slots[ids[0]].spec
        self.again(ids[0], kind=WHOLE, start=0, end=0, nbytes=first.nbytes)

    # ------------------------------------------------------------------ running
    def run(self) -> tuple[Blob | None, Outcome]:
        """Every part read and merged (or what could be, flagged in the outcome)."""
        for i, slot in enumerate(self.slots):
            self.submit_leaf(i, slot.spec)
        last = 0.0
        while not self.finished():
            if self.cancel is not None and self.cancel():
                self.out.interrupted = True
                break
            batch = self.queue.next_batch(block=False) if self.queue.has_ready() else []
            for fut in batch:
                role, a, b = self.roles.pop(fut.key)
                if fut.status in LOST:  # its worker died after it finished: Dask computes it again
                    self.roles[fut.key] = (role, a, b)
                    self.queue.add(fut)
                    continue
                if role == "reach":
                    self.on_reach(fut, a, b)
                elif fut.status != "finished":
                    exc = fut.exception()
                    raise RuntimeError(f"a merge of parts failed: {type(exc).__name__}: {exc}")
            if not batch:
                time.sleep(POLL_S)
            now = time.monotonic()
            if self.progress is not None and now - last >= 0.2:
                last = now
                self.progress(self.snapshot())
        return self.collect()

    def finished(self) -> bool:
        root = self.levels[-1][0] if self.levels[0] else EMPTY
        return root in (EMPTY, HOLE) or (not isinstance(root, str) and root.status == "finished")

    def snapshot(self) -> ScanProgress:
        where = f"{self.out.done_parts}/{len(self.slots)} parts"
        return ScanProgress(
            self.out.done_bytes, self.bytes_total, self.rows, self.rows,
            time.monotonic() - self.started, where, SketchSet(),
        )  # fmt: skip

    def collect(self) -> tuple[Blob | None, Outcome]:
        """The root, or on an interruption the finished pieces merged; holes named."""
        if not self.levels[0]:
            return None, self.out
        root = self.levels[-1][0]
        if not isinstance(root, str) and root.status == "finished":
            return root.result(), self.out
        for fut in self.queue.next_batch(block=False) if self.queue.has_ready() else []:
            role, a, b = self.roles.pop(fut.key)
            if role == "reach":
                self.on_reach(fut, a, b)
        for path in self.files:
            self.check(path, final=True)
        pieces = self.frontier(len(self.levels) - 1, 0)
        kept = {f.key for f in pieces}
        running = [s.leaf for s in self.slots if s.leaf is not None]
        running += [n for level in self.levels[1:] for n in level if not isinstance(n, str)]
        self.client.cancel([f for f in running if f.key not in kept and f.status != "finished"])
        for slot in self.slots:
            if slot.state == PENDING:
                slot.state = HOLE
        o, every = self.options, self.split_every
        while len(pieces) > 1:
            pieces = [
                self.client.submit(
                    tasks.combine,
                    pieces[g : g + every],
                    o.by,
                    o.max_groups,
                    key=f"ogive-final-{self.run_id}-{len(pieces)}-{g}",
                    priority=2,
                )
                for g in range(0, len(pieces), every)
            ]
        if not pieces:
            return None, self.out
        try:
            return pieces[0].result(timeout=FINAL_WAIT_S), self.out
        except Exception as exc:  # the workers holding them are gone (a timeout, a lost worker)
            raise RuntimeError(
                f"the parts read before the stop could not be gathered ({type(exc).__name__})"
            ) from None

    def frontier(self, level: int, j: int) -> list[Any]:
        """Finished nodes under node ``j`` of ``level`` that cover the most, in order."""
        node = self.levels[level][j]
        if not isinstance(node, str) and node.status == "finished":
            return [node]
        if level == 0:
            return []
        kids = range(j * self.split_every, min((j + 1) * self.split_every, len(self.levels[level - 1])))
        return [f for k in kids for f in self.frontier(level - 1, k)]
