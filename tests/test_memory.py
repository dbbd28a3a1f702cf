"""postproc.memory.release: freed memory handed back to the system between the stages of a run."""

import sys

import psutil
import pytest

from postproc import memory


def test_release_runs_on_every_platform():
    memory.release()  # macOS, Windows and musl: pyarrow's pool only


@pytest.mark.skipif(not sys.platform.startswith("linux") or memory._TRIM is None,
                    reason="malloc_trim is glibc's (Linux); other C libraries return freed memory themselves")
def test_release_returns_a_fragmented_c_heap_to_the_system():
    # 160 MB of 1 KB blocks from C malloc, one in 64 kept: the freed pages lie below live
    # blocks, where malloc keeps them until it is told to trim (the case of a run's freed tables)
    me = psutil.Process()
    blocks = [bytes(1024) for _ in range(160_000)]
    kept = blocks[::64]
    del blocks
    before = me.memory_info().rss
    memory.release()
    after = me.memory_info().rss
    assert len(kept) == 2_500
    assert before - after > 60 * 2**20, f"RSS {before / 2**20:.0f} MB -> {after / 2**20:.0f} MB"
