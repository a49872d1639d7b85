#include "io/huge_pages.h"

#include <sys/mman.h>

#include <cstdint>

namespace figura {

void AdviseHugePages(const void* data, std::size_t bytes) {
  constexpr std::uintptr_t kHuge = std::uintptr_t{2} << 20;
  if (data == nullptr) return;
  // Offsets within the buffer itself (no integer-to-pointer casts).
  const auto begin = reinterpret_cast<std::uintptr_t>(data);
  const std::size_t lead =
      static_cast<std::size_t>((kHuge - begin % kHuge) % kHuge);
  if (bytes <= lead) return;
  const std::size_t length = (bytes - lead) / kHuge * kHuge;
  if (length == 0) return;
  // Advice only: a refusal (no THP support) changes nothing.
  // madvise takes a non-const pointer; the pages are not written here.
  void* first = const_cast<char*>(static_cast<const char*>(data) + lead);
  (void)::madvise(first, length, MADV_HUGEPAGE);
}

}  // namespace figura
