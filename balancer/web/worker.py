"""The worker process of a balance job (see :mod:`balancer.web.jobs`): reads one pickled
request on standard input, writes the pickled answer on standard output, and ends."""

from __future__ import annotations

import os
import pickle
import sys


def main() -> int:
    answer = os.fdopen(os.dup(1), "wb")
    os.dup2(2, 1)  # anything a library prints goes to the server's log, not into the answer
    sys.stdout = sys.stderr
    from balancer.web.jobs import work

    request = pickle.loads(sys.stdin.buffer.read())  # written by the server that started us
    answer.write(pickle.dumps(work(request)))
    answer.close()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
