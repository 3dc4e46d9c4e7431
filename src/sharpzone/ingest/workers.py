"""Worker processes that read image files, contained: a reader or decoder that crashes the
interpreter (a native library's segfault or abort) or hangs costs one file, never the run.

``ContainedPool`` runs any module-level function over tasks that each name a file (the
ingest's metadata reader, the blur measure's and the report page's picture decoders);
``ReaderPool`` is the ingest's. It keeps ``workers`` processes, each fed through its own pipe with up to
``depth`` files at a time (sent, and answered, in batches: one message per file would cost
as much as reading a small file). A worker reads its files in the order given, answers in
that order, and keeps in shared memory the place of the file it is at (the files before it
are finished), so when one dies the parent knows which file killed it, even with answers
still unsent: that file is
reported ("the metadata reader crashed on this file"), the worker is replaced, and the
rest of its queue (the finished-but-unsent files too) goes to the others. A file that takes longer than ``time_limit_s`` is
reported the same way ("timed out after N s"). A job may come in stages (the ingest's
reader does): a worker then takes each batch through one stage after the other, every
file of it through a stage before the next, keeping the file at work up to date as it goes. (``concurrent.futures`` and
``multiprocessing.Pool`` cannot do this: the first breaks as a whole on a dead worker, the
second hangs waiting for the lost task.)

Workers ignore Ctrl-C and SIGTERM (the parent decides when they stop), and leave quietly
when the parent goes away, even by SIGKILL: their pipe closes, or their parent process id
changes.

Who drives a pool (hands out the tasks, takes the answers, replaces the dead): the caller
(``ContainedPool.read``), a thread of the caller's (``BackgroundReads``), or a process
forked for it (``ForkedReads``, for a caller whose own time is what everyone waits for).
"""

from __future__ import annotations

import collections
import contextlib
import dataclasses
import faulthandler  # imported here, not in a worker: a fork may come while another thread imports
import itertools
import multiprocessing
import operator
import os
import queue
import signal
import threading
import time
from collections.abc import Callable, Iterable, Iterator
from multiprocessing.connection import wait

from sharpzone.ingest.records import CaptureRecord, ReadProblem

Reader = Callable[[str, "float | None"], "CaptureRecord | ReadProblem"]
Task = tuple  # the arguments of one call of the pool's function

# Files in flight per worker: enough that a worker never waits for the parent between files.
DEPTH = 128
# Answers a worker sends at once at most (it sends fewer when it has nothing more to read).
RESULT_BATCH = 32
# Per-file time limit (seconds) unless the caller says otherwise.
TIME_LIMIT_S = 30.0
# How often an idle worker checks that its parent is still there, and how often the
# background reader checks whether it is asked to stop.
PARENT_CHECK_S = 1.0
STOP_CHECK_S = 0.1
# Results read ahead of the consumer at most (memory stays flat however slow it is): about
# what two workers read while an ingest opens its catalogue, a few MB.
READ_AHEAD = 4096
# Notes (``ForkedReads``) sent at once at most: a walk of a million files noted in one go
# goes across in messages of a few hundred kB, not in one of tens of MB.
NOTES_AT_ONCE = 4096
METADATA_READER = "the metadata reader"
PICTURE_DECODER = "the picture decoder"


def crashed(doer: str = METADATA_READER) -> str:
    """The reason given for a file on which ``doer``'s process died."""
    return f"{doer} crashed on this file"

_STOP_SIGNALS = (signal.SIGINT, signal.SIGTERM)


# A record crosses the pipe as the tuple of its field values: a third cheaper to unpickle
# than the dataclass (whose state goes as a dict), in the one process that also writes.
_RECORD_FIELDS = tuple(field.name for field in dataclasses.fields(CaptureRecord))
_record_values = operator.attrgetter(*_RECORD_FIELDS)


def _packed(result):
    return _record_values(result) if type(result) is CaptureRecord else result


def unpacked_answer(answer):
    """A reader's answer as it came across the pipe (``ReaderPool``), as the reader gave it."""
    if type(answer) is not tuple:
        return answer
    record = object.__new__(CaptureRecord)  # as unpickling the dataclass itself would make it
    record.__dict__.update(zip(_RECORD_FIELDS, answer))
    return record


def timed_out(limit_s: float, doer: str = METADATA_READER) -> str:
    """The reason given for a file whose reading ran past ``limit_s`` seconds."""
    return f"{doer} timed out after {limit_s:g} s on this file"


def read_problem(task: Task, reason: str) -> ReadProblem:
    """The ingest's answer for a file that could not be read: a ``ReadProblem``."""
    return ReadProblem(task[0], reason)


@dataclasses.dataclass(frozen=True)
class _Job:
    # Called as work(*task); or stages: the first called as stage(*task), each next one
    # with what the one before returned, until one returns an answer that is ``final``.
    work: Callable | tuple[Callable, ...]
    problem: Callable[[Task, str], object]  # the answer for a task that failed, with the reason
    doer: str  # who works, as the reasons name it ("the metadata reader")
    packed: Callable | None = None  # an answer as it crosses the pipe, and back
    unpacked: Callable | None = None
    answer_batch: int = RESULT_BATCH  # answers sent at once at most
    final: Callable[[object], bool] | None = None  # stages: whether a result ends its file's stages


def _attempt(job: _Job, function: Callable, args: tuple, task: Task) -> tuple[object, bool]:
    """``function(*args)`` for ``task``, and whether it failed: a bug costs this file only."""
    try:
        return function(*args), False
    except Exception as error:  # noqa: BLE001 - a reader bug costs this file only
        return job.problem(task, f"{job.doer} failed on this file ({type(error).__name__})"), True


# Where a worker is, in shared memory: the place of the file at work among all it was sent
# (the files before it are finished), and the steps taken so far (a step is a file, or a
# file through one stage), by which the parent tells a worker at work from a stuck one.
_PLACE, _STEPS = 0, 1


def _one_by_one(job: _Job, tasks: list[Task], at) -> list:
    """The answers to ``tasks``, each file done before the next."""
    answers = []
    for task in tasks:
        answers.append(_attempt(job, job.work, task, task)[0])
        at[_PLACE] += 1
        at[_STEPS] += 1
    return answers


def _stage_by_stage(job: _Job, tasks: list[Task], at) -> list:
    """The answers to ``tasks``, every file through one stage before the next; ``at`` names
    the file at work at each step."""
    first = at[_PLACE]
    results: list = list(tasks)
    going = list(range(len(tasks)))
    last = len(job.work) - 1
    for number, stage in enumerate(job.work):
        still = []
        for index in going:
            at[_PLACE] = first + index
            result, failed = _attempt(job, stage, tasks[index] if number == 0 else (results[index],), tasks[index])
            at[_STEPS] += 1
            results[index] = result
            if not (failed or number == last or job.final(result)):
                still.append(index)
        going = still
    at[_PLACE] = first + len(tasks)
    return results


def _start_contained(process) -> None:
    """Start ``process`` with the stop signals blocked across the fork, so a child that
    ignores them (``_ignore_stop_signals``) does so before any could reach it; the parent
    gets any that arrived meanwhile right after."""
    signal.pthread_sigmask(signal.SIG_BLOCK, _STOP_SIGNALS)
    try:
        process.start()
    finally:
        signal.pthread_sigmask(signal.SIG_UNBLOCK, _STOP_SIGNALS)


def _ignore_stop_signals() -> None:
    """In a child started by ``_start_contained``: Ctrl-C and SIGTERM are the parent's to act on."""
    for number in _STOP_SIGNALS:
        signal.signal(number, signal.SIG_IGN)
    signal.pthread_sigmask(signal.SIG_UNBLOCK, _STOP_SIGNALS)


def _worker_main(connection, job: _Job, parent_pid: int, at) -> None:
    """A worker's loop: run the job on each batch of tasks sent, keep where it is in ``at``
    (shared memory: the place of the file at work, and the steps taken), and answer with
    the results in order, at most ``answer_batch`` at a time."""
    faulthandler.disable()  # a crash is reported by the parent, in one line
    _ignore_stop_signals()
    try:
        while True:
            if not connection.poll(PARENT_CHECK_S):
                if os.getppid() != parent_pid:
                    return
                continue
            tasks = connection.recv()
            if tasks is None:
                return
            run = _stage_by_stage if isinstance(job.work, tuple) else _one_by_one
            for start in range(0, len(tasks), job.answer_batch):
                answers = run(job, tasks[start:start + job.answer_batch], at)
                connection.send(list(map(job.packed, answers)) if job.packed else answers)
    except (EOFError, OSError):
        return  # the parent went away: leave without a word


_DONE = object()


class _Failed:
    def __init__(self, error: BaseException) -> None:
        self.error = error


class _Worker:
    def __init__(self, context, job: _Job) -> None:
        self.connection, child_end = context.Pipe(duplex=True)
        self.at = context.RawArray("q", 2)  # where it is (_PLACE, _STEPS)
        self.process = context.Process(target=_worker_main, args=(child_end, job, os.getpid(), self.at),
                                       daemon=True)
        _start_contained(self.process)
        child_end.close()
        self.queue: collections.deque[Task] = collections.deque()
        self.answered = 0  # files whose answers the parent has received
        self.seen_steps = 0
        self.head_since = time.monotonic()

    def send(self, tasks: list[Task]) -> None:
        if not self.queue:
            self.head_since = time.monotonic()
        self.queue.extend(tasks)
        try:
            self.connection.send(tasks)
        except OSError:
            pass  # it just died: found by its sentinel, and these tasks go to another worker

    def note_progress(self, now: float) -> None:
        """A step taken since last seen: the file at work is another one, restart its clock."""
        steps = self.at[_STEPS]
        if steps != self.seen_steps:
            self.seen_steps = steps
            self.head_since = now

    def in_progress(self) -> int:
        """Index in ``queue`` of the file being read (finished ones may still be unsent)."""
        return max(0, self.at[_PLACE] - self.answered)

    def stop(self, *, at_once: bool = False) -> None:
        if not at_once:
            try:
                self.connection.send(None)
            except OSError:
                pass
        self.connection.close()
        if not at_once:
            self.process.join(1.0)
        if self.process.is_alive():
            self.process.kill()
        self.process.join()


def _context():
    methods = multiprocessing.get_all_start_methods()
    return multiprocessing.get_context("fork" if "fork" in methods else "spawn")


class ContainedPool:
    """``workers`` contained processes running ``work(*task)`` for each task; use as a
    context manager around ``read``.

    ``work`` is a module-level function and each task the tuple of its arguments; or a
    tuple of stage functions (``final(result)`` then tells a result that ends a file's
    stages early), run stage by stage over each batch of ``answer_batch`` files.
    ``problem(task, reason)`` (module-level too) is the answer for a task whose worker
    crashed, hung past ``time_limit_s`` or raised, and ``doer`` names the worker in those
    reasons ("the picture decoder crashed on this file"). Tasks of a few tens of
    milliseconds or more (a picture decoded) want a small ``depth`` and an ``answer_batch``
    of 1, so progress shows every file and an interrupt finds no finished work unsent.
    """

    def __init__(self, work: Callable | tuple[Callable, ...], workers: int, *,
                 problem: Callable[[Task, str], object], doer: str, time_limit_s: float = TIME_LIMIT_S,
                 depth: int = DEPTH, packed: Callable | None = None, unpacked: Callable | None = None,
                 answer_batch: int = RESULT_BATCH, final: Callable[[object], bool] | None = None) -> None:
        if isinstance(work, tuple) and (not work or final is None):
            raise ValueError("a job in stages needs at least one stage and a final() test")
        self._job = _Job(work, problem, doer, packed, unpacked, max(1, answer_batch), final)
        self.size = max(1, workers)
        self.time_limit_s = time_limit_s
        self.depth = max(1, depth)
        self._context = _context()
        self._workers: list[_Worker] = []
        self.replaced = 0

    def __enter__(self) -> ContainedPool:
        return self

    def __exit__(self, kind, error, traceback) -> None:
        self.close(at_once=kind is not None)

    def close(self, *, at_once: bool = False) -> None:
        """Stop every worker (``at_once``: kill them without waiting, after an interrupt)."""
        workers, self._workers = self._workers, []
        for worker in workers:
            worker.stop(at_once=at_once)

    def _start_workers(self) -> None:
        if not self._workers:
            self._workers = [_Worker(self._context, self._job) for _ in range(self.size)]

    def read(self, tasks: Iterable[Task], *, stop: threading.Event | None = None) -> Iterator:
        """Read every task; one result per task, in any order. ``tasks`` may be a generator
        (the folder walk), drawn from only as workers have room. ``stop`` ends it early."""
        for answers in self._read_lists(tasks, stop=stop):
            yield from answers

    def _read_lists(self, tasks: Iterable[Task], *, stop: threading.Event | None = None, unpack: bool = True
                    ) -> Iterator[list]:
        """``read``, the results in the lists the workers send them in (``unpack=False``: as
        they crossed the pipe, for a process that passes them on: see ``ForkedReads``)."""
        tasks = iter(tasks)
        retry: collections.deque[Task] = collections.deque()
        exhausted = False
        self._start_workers()
        while True:
            # Top up in batches, not file by file, and in turns of at most RESULT_BATCH
            # files each, so a short run is shared between the workers too.
            chunk = min(self._job.answer_batch, max(1, self.depth // 4))
            sent = True
            while sent:
                sent = False
                for worker in self._workers:
                    room = min(self.depth - len(worker.queue), chunk)
                    if room < chunk and worker.queue:
                        continue
                    batch = []
                    while len(batch) < room and retry:
                        batch.append(retry.popleft())
                    while len(batch) < room and not exhausted:
                        try:
                            batch.append(next(tasks))
                        except StopIteration:
                            exhausted = True
                    if batch:
                        worker.send(batch)
                        sent = True
            busy = [worker for worker in self._workers if worker.queue]
            if not busy or (stop is not None and stop.is_set()):
                return
            now = time.monotonic()
            deadline = min(worker.head_since for worker in busy) + self.time_limit_s
            waitables = {worker.connection: worker for worker in busy}
            waitables.update({worker.process.sentinel: worker for worker in busy})
            timeout = max(0.0, deadline - now)
            ready = wait(list(waitables), timeout=timeout if stop is None else min(timeout, STOP_CHECK_S))
            handled: set[int] = set()
            for item in ready:
                worker = waitables[item]
                if id(worker) in handled:
                    continue
                handled.add(id(worker))
                yield from self._drain(worker, retry, unpack)
            now = time.monotonic()
            for worker in list(self._workers):
                worker.note_progress(now)
                if worker.queue and now - worker.head_since > self.time_limit_s:
                    yield from self._replace(worker, timed_out(self.time_limit_s, self._job.doer), retry)

    def _drain(self, worker: _Worker, retry: collections.deque, unpack: bool = True) -> Iterator[list]:
        """Every answer the worker has sent; if it died, its culprit and a replacement."""
        try:
            while worker.queue and worker.connection.poll():
                answers = worker.connection.recv()
                for _ in answers:
                    worker.queue.popleft()
                worker.answered += len(answers)
                yield list(map(self._job.unpacked, answers)) if unpack and self._job.unpacked else answers
        except (EOFError, OSError):
            pass
        if worker.queue and not worker.process.is_alive():
            yield from self._replace(worker, crashed(self._job.doer), retry)

    def _replace(self, worker: _Worker, reason: str, retry: collections.deque) -> Iterator[list]:
        queue = list(worker.queue)
        # Files before the one at work were read but their answers died with the worker:
        # they are read again. (If every file was read, the first takes the blame, so a
        # worker that dies on answering cannot loop.)
        at = worker.in_progress()
        at = at if at < len(queue) else 0
        culprit = queue[at]
        retry.extendleft(reversed(queue[:at] + queue[at + 1:]))
        worker.queue.clear()
        worker.stop(at_once=True)
        self._workers[self._workers.index(worker)] = _Worker(self._context, self._job)
        self.replaced += 1
        yield [self._job.problem(culprit, reason)]


def _waiting_lists() -> queue.Queue:
    """The queue the lists of answers wait in for the caller: ``READ_AHEAD`` answers at most,
    so memory stays flat however long the caller is away."""
    return queue.Queue(maxsize=max(1, READ_AHEAD // RESULT_BATCH))


def _put_unless(waiting: queue.Queue, item, stop: threading.Event) -> bool:
    """Put ``item`` in ``waiting`` as soon as there is room; ``False`` if ``stop`` is set first."""
    while not stop.is_set():
        try:
            waiting.put(item, timeout=STOP_CHECK_S)
            return True
        except queue.Full:
            continue
    return False


class BackgroundReads:
    """``pool.read(tasks)`` started at once and driven by a thread of its own: the workers
    read while the caller does other work (opens the catalogue, writes a batch). Iterate for
    the results (each once, in any order); ``close`` stops the thread (call it, or use the
    object as a context manager, also when stopping early). Results wait in a bounded queue
    (``READ_AHEAD``), so memory stays flat however long the caller is away."""

    def __init__(self, pool: ContainedPool, tasks: Iterable[Task]) -> None:
        # Answers go across in the lists they came in: one hand-over per list, not per file.
        self._results = _waiting_lists()
        self._stop = threading.Event()
        self._finished = False
        # The workers are forked here, before the thread starts: a fork while another thread
        # of this process runs could copy a lock that thread holds. (A replacement for a
        # worker that died is forked from the thread, into a child that runs only the job.)
        pool._start_workers()
        self._thread = threading.Thread(target=self._run, args=(pool, tasks), name="sharpzone-readers",
                                        daemon=True)
        self._thread.start()

    def _put(self, item) -> bool:
        return _put_unless(self._results, item, self._stop)

    def _run(self, pool: ContainedPool, tasks: Iterable[Task]) -> None:
        try:
            for answers in pool._read_lists(tasks, stop=self._stop):
                if not self._put(answers):
                    return
            self._put(_DONE)
        except BaseException as error:  # noqa: BLE001 - handed to the caller's thread
            self._put(_Failed(error))

    def __iter__(self) -> Iterator:
        while not self._finished:
            item = self._results.get()
            if item is _DONE:
                self._finished = True
                return
            if isinstance(item, _Failed):
                raise item.error
            yield from item

    def close(self) -> None:
        self._stop.set()
        self._thread.join()

    def __enter__(self) -> BackgroundReads:
        return self

    def __exit__(self, *exc_info) -> None:
        self.close()


class ForkedReads:
    """A pool's reading driven from a process of its own, forked now (where the platform
    forks: ``can_fork``), so that the caller's process spends nothing on it: no walk, no
    hand-out, no waiting on the workers, no interpreter lock shared with a thread that does
    (the ingest writes in the caller's process, and that is what an ingest waits for).

    In the child, ``tasks_of(note)`` gives the tasks (a generator: the folder walk), and may
    ``note(item)`` anything the caller must see before the answers to the tasks after it
    (the walk's events); ``pool_for(head)`` makes the pool, knowing the first ``head_size``
    tasks (a short run wants fewer workers). Iterate ``results(on_notes)`` for the answers
    (unpacked with ``unpacked``): the notes arrive, in order, through ``on_notes(items)``
    before any answer that came after them. Use as a context manager; leaving stops the
    child and its workers (at once after an error or an interrupt). The child ignores
    Ctrl-C and SIGTERM as the workers do, stops its workers and leaves when this process
    goes away, and keeps at most ``READ_AHEAD`` answers waiting for it. ``niceness`` lowers
    the priority of the child and its workers (``os.nice``) so that, where they compete for
    the cores, the caller's process comes first.
    """

    def __init__(self, tasks_of: Callable[[Callable[[object], None]], Iterable[Task]],
                 pool_for: Callable[[list[Task]], ContainedPool], head_size: int,
                 unpacked: Callable | None = None, niceness: int = 0) -> None:
        context = multiprocessing.get_context("fork")
        self._receive, send = context.Pipe(duplex=False)
        self._unpacked = unpacked
        self._finished = False
        # Not a daemon: a daemon may not start processes of its own (the workers).
        self._process = context.Process(target=_drive, name="sharpzone-reads",
                                        args=(send, self._receive, tasks_of, pool_for, head_size, niceness))
        _start_contained(self._process)
        send.close()

    def results(self, on_notes: Callable[[list], None]) -> Iterator:
        unpacked = self._unpacked
        while not self._finished:
            try:
                message = self._receive.recv()
            except (EOFError, OSError):
                raise RuntimeError("the process that drives the readers ended unexpectedly") from None
            if message is None:
                self._finished = True
                return
            if isinstance(message, _Failed):
                raise message.error
            notes, answers = message
            if notes:
                on_notes(notes)
            yield from (map(unpacked, answers) if unpacked else answers)

    def close(self, *, at_once: bool = False) -> None:
        self._receive.close()
        if at_once or not self._finished:
            self._process.terminate()  # the child stops its workers at once, then leaves
            self._process.join(PARENT_CHECK_S)
            if self._process.is_alive():
                self._process.kill()
        self._process.join()

    def __enter__(self) -> ForkedReads:
        return self

    def __exit__(self, kind, error, traceback) -> None:
        self.close(at_once=kind is not None)


def can_fork() -> bool:
    """Whether ``ForkedReads`` can run here (the child takes its work as it is, unpickled)."""
    return "fork" in multiprocessing.get_all_start_methods()


class _Stopped(BaseException):
    """SIGTERM from the caller, in ``ForkedReads``' child: stop the workers at once and leave."""


def _raise_stopped(signal_number, frame) -> None:
    raise _Stopped()


def _drive(connection, callers_end, tasks_of, pool_for, head_size: int, niceness: int) -> None:
    """``ForkedReads``' child: the reading, each list of answers sent with the notes taken
    before it, by a thread of its own (so the workers are kept fed while the caller is
    busy), then ``None``; an error is sent as ``_Failed``."""
    callers_end.close()  # else the pipe would not break when the caller goes away
    _ignore_stop_signals()
    if niceness:
        with contextlib.suppress(AttributeError, OSError):  # (no os.nice, or not allowed: as it is)
            os.nice(niceness)
    signal.signal(signal.SIGTERM, _raise_stopped)
    gone = threading.Event()  # the caller went away (its end of the pipe is closed)
    outgoing = _waiting_lists()
    sender = threading.Thread(target=_send_all, args=(connection, outgoing, gone), daemon=True)
    notes: list = []

    def put(item) -> None:
        if not _put_unless(outgoing, item, gone):
            raise _Stopped()

    def put_with_notes(answers: list) -> None:
        """``answers``, after the notes taken before them (in messages of their own while
        there are more than ``NOTES_AT_ONCE``)."""
        while len(notes) > NOTES_AT_ONCE:
            put((notes[:NOTES_AT_ONCE], []))
            del notes[:NOTES_AT_ONCE]
        put((notes[:], answers))
        notes.clear()

    try:
        try:
            with contextlib.ExitStack() as stack:
                tasks = iter(tasks_of(notes.append))
                head = list(itertools.islice(tasks, head_size))
                pool = stack.enter_context(pool_for(head)) if head else None  # left at once on an error
                if pool is not None:
                    pool._start_workers()  # forked before the sender starts, as BackgroundReads does
                sender.start()
                if pool is not None:
                    for answers in pool._read_lists(itertools.chain(head, tasks), stop=gone, unpack=False):
                        put_with_notes(answers)
                    if gone.is_set():
                        raise _Stopped()
                put_with_notes([])
                put(None)
        except _Stopped:
            raise
        except BaseException as error:  # noqa: BLE001 - handed to the caller
            if sender.ident is None:
                sender.start()
            put(_Failed(error))
        sender.join()
    except _Stopped:
        return  # asked to stop, or the caller is gone: without a word


def _send_all(connection, outgoing: queue.Queue, gone: threading.Event) -> None:
    """``ForkedReads``' child: send each message in turn, up to the last (``None`` or a
    failure). A message that cannot be pickled (it is pickled whole before a byte is
    written) ends the reading with a failure that can."""
    while True:
        item = outgoing.get()
        try:
            connection.send(item)
        except (OSError, ValueError):  # the caller went away
            gone.set()
            return
        except Exception as error:  # noqa: BLE001 - told to the caller in words
            failure = item.error if isinstance(item, _Failed) else error
            with contextlib.suppress(Exception):
                connection.send(_Failed(RuntimeError(
                    f"the process that drives the readers failed ({type(failure).__name__}: {failure})")))
            gone.set()
            return
        if item is None or isinstance(item, _Failed):
            return


class ReaderPool(ContainedPool):
    """The ingest's pool: ``reader`` is a module-level function ``(path, user_focus_mm) ->
    CaptureRecord | ReadProblem`` (tests pass readers that crash or hang on marker files),
    or stages of one (normally ``ingest.capture.STAGES``), which a ``ReadProblem`` ends."""

    def __init__(self, reader: Reader | tuple[Callable, ...], workers: int, *,
                 time_limit_s: float = TIME_LIMIT_S, depth: int = DEPTH) -> None:
        super().__init__(reader, workers, problem=read_problem, doer=METADATA_READER, time_limit_s=time_limit_s,
                         depth=depth, packed=_packed, unpacked=unpacked_answer, final=_is_read_problem)


def _is_read_problem(result) -> bool:
    return type(result) is ReadProblem
