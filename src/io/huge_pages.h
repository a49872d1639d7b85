// Transparent huge pages for large, freshly allocated buffers.
#pragma once

#include <cstddef>

namespace figura {

// Asks the kernel for transparent huge pages over the 2 MiB-aligned part of
// [data, data + bytes) before the buffer is first written: one page fault
// per 2 MiB instead of per 4 KiB (Linux THP in "madvise" mode, madvise(2)
// MADV_HUGEPAGE; a no-op where unavailable or for small buffers). On the
// machines measured here the page faults of a fresh 48 MB image cost more
// than decoding it (tests/benchmarks/bench_rings.cpp).
void AdviseHugePages(const void* data, std::size_t bytes);

}  // namespace figura
