#include "io/huge_pages.h"

#include <sys/mman.h>

#include <cstdint>

namespace figura {

void AdviseHugePages(const void* data, std::size_t bytes) {
  constexpr std::uintptr_t kHuge = std::uintptr_t{2} << 20;
  const auto begin = reinterpret_cast<std::uintptr_t>(data);
  const std::uintptr_t end = begin + bytes;
  const std::uintptr_t first = (begin + kHuge - 1) & ~(kHuge - 1);
  const std::uintptr_t last = end & ~(kHuge - 1);
  if (data != nullptr && last > first) {
    // Advice only: a refusal (no THP support) changes nothing.
    (void)::madvise(reinterpret_cast<void*>(first), last - first,
                    MADV_HUGEPAGE);
  }
}

}  // namespace figura
