// Shared pieces of the libFuzzer harnesses (docs/fuzzing.md): the one
// exception type bad input may raise, and a check that aborts (a libFuzzer
// finding) when a property of a result does not hold.
#pragma once

#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <string_view>

#include "core/error.h"

namespace figura::fuzz {

// The fuzz bytes as text (not NUL-terminated, may hold any byte).
inline std::string_view AsText(const std::uint8_t* data, std::size_t size) {
  // NOLINTNEXTLINE(cppcoreguidelines-pro-type-reinterpret-cast)
  return {reinterpret_cast<const char*>(data), size};
}

// Aborts with `what` on standard error when `ok` is false: a broken
// property of a parsed result is a finding like a crash.
inline void Require(bool ok, const char* what) {
  if (!ok) {
    std::fprintf(stderr, "figura fuzz: property violated: %s\n", what);
    std::abort();
  }
}

// Runs `parse`; figura::InputError (bad input, documented in core/error.h)
// is the expected way to refuse input and is swallowed after checking that
// its message is not empty. Any other exception escapes the harness, which
// libFuzzer reports as a crash (std::terminate): std::bad_alloc,
// std::out_of_range, cv::Exception, nlohmann::json errors are all findings.
template <typename Parse>
void RefuseOnlyWithInputError(Parse&& parse) {
  try {
    parse();
  } catch (const InputError& e) {
    Require(e.what()[0] != '\0', "InputError with an empty message");
  }
}

}  // namespace figura::fuzz
