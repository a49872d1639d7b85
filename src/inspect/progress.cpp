#include "inspect/progress.h"

#include <unistd.h>

namespace figura {
namespace {

constexpr int kBarWidth = 30;
constexpr auto kRedrawInterval = std::chrono::milliseconds(100);

}  // namespace

Progress::Progress(int total, ProgressStyle style, std::FILE* out)
    : total_(total), style_(style), out_(out) {
  if (style_ == ProgressStyle::kAuto) {
    style_ =
        isatty(fileno(out_)) != 0 ? ProgressStyle::kBar : ProgressStyle::kLines;
  }
}

Progress::~Progress() { Finish(); }

void Progress::Done(const LotRow& row) {
  const std::lock_guard<std::mutex> lock(mutex_);
  ++done_;
  if (row.status == "error") {
    ++error_;
  } else if (row.verdict == "pass") {
    ++pass_;
  } else if (row.verdict == "fail") {
    ++fail_;
  } else {
    ++indeterminate_;
  }
  if (style_ == ProgressStyle::kLines) {
    const std::string what = row.status == "error" ? "error" : row.verdict;
    std::fprintf(out_, "figura inspect: [%d/%d] %s %s: %s%s%s%s\n", done_,
                 total_, row.file.c_str(),
                 row.part.empty() ? "" : ("(" + row.part + ")").c_str(),
                 what.c_str(), row.skipped ? " (unchanged, skipped)" : "",
                 row.message.empty() ? "" : " - ", row.message.c_str());
    std::fflush(out_);
  } else if (style_ == ProgressStyle::kBar) {
    Draw(done_ == total_);
  }
}

void Progress::Log(const std::string& line) {
  if (style_ == ProgressStyle::kQuiet) return;
  const std::lock_guard<std::mutex> lock(mutex_);
  if (style_ == ProgressStyle::kBar) std::fprintf(out_, "\r\033[K");
  std::fprintf(out_, "%s\n", line.c_str());
  if (style_ == ProgressStyle::kBar) Draw(true);
  std::fflush(out_);
}

void Progress::Draw(bool force) {
  const auto now = std::chrono::steady_clock::now();
  if (!force && now - last_draw_ < kRedrawInterval) return;
  last_draw_ = now;
  const int filled = total_ > 0 ? done_ * kBarWidth / total_ : kBarWidth;
  std::string bar(static_cast<std::size_t>(filled), '#');
  bar.resize(kBarWidth, '.');
  std::fprintf(out_,
               "\r\033[K[%s] %d/%d  pass %d  fail %d  indeterminate %d  "
               "error %d",
               bar.c_str(), done_, total_, pass_, fail_, indeterminate_,
               error_);
  std::fflush(out_);
}

void Progress::Finish() {
  const std::lock_guard<std::mutex> lock(mutex_);
  if (finished_) return;
  finished_ = true;
  if (style_ == ProgressStyle::kBar) {
    Draw(true);
    std::fprintf(out_, "\n");
    std::fflush(out_);
  }
}

}  // namespace figura
