// Progress of a lot run on standard error: a one-line bar redrawn at most
// ten times a second when standard error is a terminal, otherwise one plain
// log line per finished part (for log files and CI).
#pragma once

#include <chrono>
#include <cstdio>
#include <mutex>
#include <string>

#include "inspect/lot_summary.h"

namespace figura {

// How progress is shown.
enum class ProgressStyle {
  kAuto,   // a bar if stderr is a terminal (isatty), else lines
  kBar,    // the redrawn bar
  kLines,  // one line per part
  kQuiet,  // nothing
};

// Thread-safe progress display.
class Progress {
 public:
  // `total` inputs; writes to `out` (stderr by default).
  Progress(int total, ProgressStyle style, std::FILE* out = stderr);
  Progress(const Progress&) = delete;
  Progress& operator=(const Progress&) = delete;
  ~Progress();

  // Reports one finished input.
  void Done(const LotRow& row);
  // Prints a line (clears the bar first when one is shown).
  void Log(const std::string& line);
  // Ends the bar line.
  void Finish();
  // True when a bar is drawn.
  [[nodiscard]] bool bar() const { return style_ == ProgressStyle::kBar; }

 private:
  void Draw(bool force);

  std::mutex mutex_;
  int total_;
  ProgressStyle style_;
  std::FILE* out_;
  int done_ = 0, pass_ = 0, fail_ = 0, indeterminate_ = 0, error_ = 0;
  std::chrono::steady_clock::time_point last_draw_{};
  bool finished_ = false;
};

}  // namespace figura
