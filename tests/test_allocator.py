"""The allocator set-up of the command line (siting.allocator)."""

import platform

from siting.allocator import keep_freed_memory


def test_glibc_takes_the_thresholds():
    # mallopt(3) returns 1 on success (glibc manual, "Malloc Tunable Parameters");
    # elsewhere the set-up is a no-op that says so
    expected = platform.libc_ver()[0] == "glibc"
    assert keep_freed_memory() is expected
