"""Imported by the multiprocessing fork server only (postproc.engines.PRELOAD), before its
loop starts: Ctrl-C is ignored there, and a worker forked from it starts with the handlers
the server had at that moment (CPython's forkserver restores them in each child), so a
worker ignores Ctrl-C from its first instruction, not only once its initializer runs
(postproc.faults.worker_init). The main process alone acts on Ctrl-C. The compiled kernels
are loaded here once, for every worker (postproc.kernels.warm). Nothing else imports this
module."""

import signal

signal.signal(signal.SIGINT, signal.SIG_IGN)

from postproc import kernels  # noqa: E402  (after the handler: loading takes a while)

try:  # only a head start: a worker loads the kernels itself, or takes the numpy path, if this fails
    kernels.warm()
except Exception:  # noqa: BLE001  (a fork server that fails here would fail every worker start)
    pass
