// The tool's name and version, written into every result.
#pragma once

namespace figura {

// Tool name as written in results ("figura").
inline constexpr const char* kToolName = "figura";

// Version string of this build (from CMake's project version).
const char* Version();

}  // namespace figura
