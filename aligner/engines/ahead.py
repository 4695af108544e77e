"""A helper process that compiles the later stages' kernels while the run does the early ones.

On a first run (numba's cache cold) one process would compile every kernel one after another.
:class:`CompileAhead` starts ``python -m aligner.kernels.ahead`` with the kernels of the stages
after the first that are not cached, the largest first and then from the last stage backwards
(:func:`~aligner.kernels.ahead.helper_queue`), while the run compiles forwards from the first
stage as it calls its kernels. When the run reaches a stage whose kernel the helper is compiling,
it takes kernels from the back of the helper's list (telling the helper to skip them) instead of
waiting idle, then waits for that kernel; kernels of the stage the helper has not begun, the run
compiles itself. Once nothing is left for the helper, it is let go.

Nothing changes when the cache is warm (no process is started), when the helper cannot start or
dies (the run compiles as usual), off POSIX systems, or when ``ALIGNER_COMPILE_AHEAD=0`` is set.
Results never depend on it: the helper only fills numba's cache.
"""

from __future__ import annotations

import os
import subprocess
import sys
import threading
from pathlib import Path

from aligner.kernels import ahead


class CompileAhead:
    """Context manager; call :meth:`reach` as each stage starts (``stages``: the pipeline's, in order,
    by default those of :data:`aligner.kernels.ahead.KERNEL_STAGES`)."""

    def __init__(self, stages=ahead.KERNEL_STAGES, enabled: bool | None = None):
        if enabled is None:
            # (POSIX: the helper polls its input with select, which Windows offers for sockets only)
            enabled = os.environ.get("ALIGNER_COMPILE_AHEAD", "1") != "0" and os.name == "posix"
        self.stages = list(stages)
        self.enabled = enabled
        self._proc: subprocess.Popen | None = None
        self._queue: list[str] = []  # the helper's kernels, in its order
        self._began: set[str] = set()
        self._ended: set[str] = set()
        self._taken: set[str] = set()  # compiled (or being compiled) by the run itself
        self._gone = False
        self._cond = threading.Condition()

    def __enter__(self):
        if self.enabled:
            queue = ahead.helper_queue(self.stages)  # the run starts the first stage at once
            if queue:
                self._start(queue)
        return self

    def __exit__(self, exc_type, exc, tb):
        if exc_type is not None and self._proc is not None:
            # the run failed (an output directory refused, bad input): the helper's work is not
            # wanted now, so it is stopped at once (numba writes a cache entry whole or not at all)
            self._proc.kill()
        self.release()

    @property
    def started(self) -> bool:
        return self._proc is not None

    def _command(self, queue: list[str]) -> list[str]:
        return [sys.executable, "-m", "aligner.kernels.ahead", *queue]

    def _start(self, queue: list[str]) -> None:
        # ``python -m`` looks in its working directory first: started from the directory above this
        # package, the helper compiles this very package (from a source checkout beside an
        # installed copy, it would otherwise fill the cache of the other one)
        home = Path(__file__).resolve().parents[2]  # .../aligner/engines/ahead.py
        try:
            self._proc = subprocess.Popen(self._command(queue), cwd=home,
                                          stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                                          stderr=subprocess.DEVNULL, text=True)
        except OSError:
            self._proc = None
            return
        self._queue = queue
        threading.Thread(target=self._listen, args=(self._proc,), daemon=True).start()

    def _listen(self, proc) -> None:
        for line in proc.stdout:
            word, _, key = line.strip().partition(" ")
            with self._cond:
                (self._began if word == "begin" else self._ended).add(key)
                self._cond.notify_all()
        with self._cond:
            self._gone = True
            self._cond.notify_all()

    def _take(self, key: str) -> bool:
        """Claim ``key`` from the helper (False if it has begun it); the caller compiles it."""
        with self._cond:
            if key in self._began or key in self._taken:
                return False
            self._taken.add(key)
        try:
            self._proc.stdin.write(f"skip {key}\n")
            self._proc.stdin.flush()
        except (OSError, ValueError):
            pass
        return True

    def reach(self, stage: str) -> None:
        """The run is about to start ``stage``: have its kernels compiled before it calls them.

        Kernels the helper has not begun are compiled here; while the helper compiles one the
        stage needs, this process takes kernels from the back of the helper's list.
        """
        if self._proc is None:
            return
        for key in ahead.stage_kernels(stage):
            if key not in self._queue or key in ahead.ON_DEMAND:
                continue  # cached already, the first stage's, or maybe never called (compiled as called)
            while True:
                if self._take(key):
                    ahead.compile_kernel(key)
                    break
                with self._cond:
                    if key in self._ended or key in self._taken or self._gone:
                        break
                spare = next((k for k in reversed(self._queue) if k not in ahead.ON_DEMAND and self._take(k)), None)
                if spare is not None:
                    ahead.compile_kernel(spare)
                    continue
                with self._cond:
                    self._cond.wait_for(lambda: key in self._ended or self._gone)
                break
        if self._gone or all(k in self._ended or k in self._taken for k in self._queue):
            self.release()  # nothing left for the helper (or it is gone): the rest compiles as called

    def release(self) -> None:
        """Tell the helper to stop after the kernel it is compiling (it exits on its own)."""
        proc, self._proc = self._proc, None
        if proc is not None and proc.stdin is not None:
            try:
                proc.stdin.close()
            except OSError:
                pass
