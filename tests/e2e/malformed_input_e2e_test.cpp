// End-to-end: a corpus of malformed inputs, generated at test time (issue 6).
// `figura rings` and `figura map` must give exactly one line on standard
// error naming the file and the problem, exit code 2, within a time bound
// and under an address-space cap (prlimit --as: no huge allocation can
// succeed); `figura inspect` on a folder holding the corpus and two good
// photos must give one error row per bad input, verdicts for the good ones,
// and account for every input in summary.csv, summary.json, index.html and
// the exit code. No output may print NaN or Inf as a number.
//
// Wrong extension: the file signature wins (io/image.h recognises formats by
// their signature), so a PNG named .tif and a TIFF named .jpg are analysed
// as what they are; the test checks they give the same radius as the same
// photo correctly named.
//
// Root ignores file permissions: for the unreadable file the commands run
// as uid 65534 via setpriv (util-linux) when the tests run as root; when that
// cannot be arranged the case is skipped with the reason.
#include <gtest/gtest.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cmath>
#include <cstdint>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "e2e/e2e_util.h"
#include "inspect/sim_lot.h"
#include "io/image.h"
#include "io/image_writer.h"

namespace figura::e2e {
namespace {

// One folder per test process (ctest runs the tests of this suite in
// parallel processes, each of which builds its inputs).
fs::path Root() { return ProcessRoot("malformed_e2e_"); }

void WriteBytes(const fs::path& path, const std::string& bytes) {
  std::ofstream(path, std::ios::binary) << bytes;
}

// The first `fraction` of a file's bytes, written to `to`.
void WriteTruncated(const fs::path& from, const fs::path& to, double fraction) {
  const std::string bytes = ReadFile(from);
  WriteBytes(
      to, bytes.substr(0, static_cast<std::size_t>(
                              static_cast<double>(bytes.size()) * fraction)));
}

// A little-endian TIFF with one IFD whose width and height are both
// `side` (TIFF 6.0, section 2: header "II*\0", IFD of 12-byte entries
// sorted by tag) and 16 bytes of "pixel data": a header claiming a huge
// image.
std::string HugeTiffHeader(std::uint32_t side) {
  std::string b = std::string("II*\0", 4);
  auto u16 = [&b](std::uint32_t v) {
    b.push_back(static_cast<char>(v & 0xFF));
    b.push_back(static_cast<char>((v >> 8) & 0xFF));
  };
  auto u32 = [&](std::uint32_t v) {
    u16(v & 0xFFFF);
    u16(v >> 16);
  };
  u32(8);  // first IFD offset
  struct Entry {
    std::uint16_t tag, type;
    std::uint32_t value;
  };
  const std::uint32_t data_at = 8 + 2 + 9 * 12 + 4;
  const std::vector<Entry> entries = {
      {256, 4, side},     // ImageWidth, LONG
      {257, 4, side},     // ImageLength
      {258, 3, 16},       // BitsPerSample, SHORT
      {259, 3, 1},        // Compression: none
      {262, 3, 1},        // PhotometricInterpretation: min-is-black
      {273, 4, data_at},  // StripOffsets (one strip)
      {277, 3, 1},        // SamplesPerPixel
      {278, 4, side},     // RowsPerStrip
      {279, 4, 16},       // StripByteCounts (far too few: a liar)
  };
  u16(static_cast<std::uint32_t>(entries.size()));
  for (const Entry& e : entries) {
    u16(e.tag);
    u16(e.type);
    u32(1);  // count
    if (e.type == 3) {
      u16(e.value);
      u16(0);
    } else {
      u32(e.value);
    }
  }
  u32(0);  // no next IFD
  b.append(16, '\x7f');
  return b;
}

// One malformed input and the words its error line must hold.
struct Case {
  std::string name;     // file name in the corpus folder
  std::string problem;  // a phrase of the one-line error (lower case)
  bool needs_unprivileged = false;
};

// Lower-case copy.
std::string Lower(std::string s) {
  for (char& c : s)
    c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return s;
}

class MalformedInputE2e : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    fs::remove_all(Root());
    const fs::path c = Root() / "corpus";
    fs::create_directories(c);
    // Two good ring photos (the lot simulator, fixed seeds), a PNG and a
    // JPEG of the same picture.
    figura::test::WriteLotPhoto(Root() / "good-a.tif", 6.0, 601);
    figura::test::WriteLotPhoto(Root() / "good-b.tif", 5.0, 602);
    const figura::Image good = figura::LoadImage(Root() / "good-a.tif");
    cv::Mat grey16;
    good.pixels.convertTo(grey16, CV_16U);
    cv::Mat grey8;
    good.pixels.convertTo(grey8, CV_8U, 255.0 / 65535.0);
    figura::WriteImage(Root() / "good-a.png", grey16);
    figura::WriteImage(Root() / "good-a.jpg", grey8);

    // The corpus.
    WriteBytes(c / "empty.tif", "");
    WriteTruncated(Root() / "good-a.tif", c / "cut-tif.tif", 0.5);
    WriteTruncated(Root() / "good-a.png", c / "cut-png.png", 0.5);
    WriteTruncated(Root() / "good-a.jpg", c / "cut-jpg.jpg", 0.5);
    std::mt19937 rng(6006);
    std::string noise(4096, '\0');
    for (char& ch : noise) ch = static_cast<char>(rng() & 0xFF);
    noise[0] = 'Q';  // not by chance a known signature
    WriteBytes(c / "noise.tif", noise);
    WriteBytes(c / "giant.tif", HugeTiffHeader(200000));
    figura::WriteImage(c / "one-pixel.tif",
                       cv::Mat(1, 1, CV_16UC1, cv::Scalar(30000)));
    figura::WriteImage(c / "saturated.tif",
                       cv::Mat(480, 640, CV_16UC1, cv::Scalar(65535)));
    figura::WriteImage(c / "uniform.tif",
                       cv::Mat(480, 640, CV_16UC1, cv::Scalar(20000)));
    figura::WriteImage(
        c / "blank-float.tif",
        cv::Mat(480, 640, CV_32FC1,
                cv::Scalar(std::numeric_limits<double>::quiet_NaN())));
    fs::create_directories(c / "folder.tif");
    fs::create_symlink("loop.tif", c / "loop.tif");
    WriteBytes(c / "locked.tif", ReadFile(Root() / "good-a.tif"));
    fs::permissions(c / "locked.tif", fs::perms::none);
    // Good photos named with the wrong extension: the signature wins.
    fs::create_directories(Root() / "renamed");
    fs::copy_file(Root() / "good-a.png", Root() / "renamed/png-as.tif");
    fs::copy_file(Root() / "good-a.tif", Root() / "renamed/tiff-as.jpg");
  }

  static std::vector<Case> Cases() {
    return {{"empty.tif", "empty file"},
            {"cut-tif.tif", "truncated"},
            {"cut-png.png", "truncated"},
            {"cut-jpg.jpg", "truncated"},
            {"noise.tif", "not a tiff, png, jpeg or bmp"},
            {"giant.tif", "too large"},
            {"one-pixel.tif", "too small"},
            {"saturated.tif", "saturated"},
            {"uniform.tif", "uniform"},
            {"blank-float.tif", "no finite"},
            {"folder.tif", "directory"},
            {"loop.tif", "symbolic links"},
            {"locked.tif", "permission denied", true}};
  }

  // Command-line options every run of `command` needs.
  static std::string Options(const std::string& command) {
    return command == "rings" ? " --wavelength 546.07nm --pixel-pitch 32um"
                              : " --wavelength 546.07nm";
  }

  // Why uid 65534 cannot be used for the unreadable file ("" when it can,
  // or when not root: then the file is unreadable for us already).
  static std::string Unprivileged(bool* as_nobody) {
    *as_nobody = ::geteuid() == 0;
    if (!*as_nobody) return {};
    // The corpus must be reachable by uid 65534 (the test tree is root's).
    for (fs::path p = Root(); p.has_relative_path(); p = p.parent_path()) {
      struct stat st {};
      if (::stat(p.c_str(), &st) == 0 && (st.st_mode & S_IXOTH) == 0) {
        return p.string() + " is not searchable by others";
      }
    }
    return CannotRunAsNobody(Root() / "corpus/empty.tif");
  }
};

// One run per command and case: exit 2, one line naming the file and the
// problem, nothing on standard output that looks like a result, and no
// non-finite number anywhere (also in the JSON, which holds an error
// record).
TEST_F(MalformedInputE2e, RingsAndMapGiveOneLineAndExit2) {
  bool as_nobody = false;
  const std::string no_nobody = Unprivileged(&as_nobody);
  for (const std::string command : {"rings", "map"}) {
    for (const Case& k : Cases()) {
      SCOPED_TRACE(command + " " + k.name);
      RunBounds bounds;
      bounds.seconds = 120;
      bounds.address_space_bytes = 3LL << 30;  // a 200000^2 image needs 80 GB
      if (k.needs_unprivileged) {
        if (!no_nobody.empty()) {
          std::cout << "[ skipped  ] " << k.name << ": " << no_nobody << "\n";
          continue;
        }
        bounds.as_nobody = as_nobody;
      }
      const fs::path file = Root() / "corpus" / k.name;
      const fs::path cap = Root() / ("cap-" + command + "-" + k.name);
      const fs::path json = cap / "r.json";
      fs::create_directories(cap);
      if (bounds.as_nobody) {
        fs::permissions(cap, fs::perms::all);  // the JSON is written as 65534
      }
      const CommandOutcome run =
          RunFiguraBounded(command + " " + Quote(file) + Options(command) +
                               " --json " + Quote(json),
                           cap, bounds);
      EXPECT_EQ(run.exit_code, 2) << run.err;
      EXPECT_EQ(CountLines(run.err), 1) << run.err;
      EXPECT_NE(run.err.find(file.string()), std::string::npos) << run.err;
      EXPECT_NE(Lower(run.err).find(k.problem), std::string::npos) << run.err;
      EXPECT_EQ(run.err.find("internal error"), std::string::npos) << run.err;
      EXPECT_EQ(run.err.find("out of memory"), std::string::npos) << run.err;
      // The JSON records the error for this input.
      const std::string text = ReadFile(json);
      ASSERT_FALSE(text.empty());
      const auto r = nlohmann::json::parse(text);
      EXPECT_EQ(r["status"]["state"], "error");
      for (const std::string& out : {run.out, run.err, text}) {
        EXPECT_TRUE(NonFiniteTokens(out).empty())
            << NonFiniteTokens(out).front();
      }
    }
  }
}

// The signature wins over the extension: a PNG named .tif and a TIFF named
// .jpg give the radius of the correctly named photo.
TEST_F(MalformedInputE2e, SignatureWinsOverExtension) {
  auto radius = [](const fs::path& photo, const std::string& tag) {
    const fs::path cap = Root() / ("cap-ext-" + tag);
    const CommandOutcome run =
        RunFiguraBounded("rings " + Quote(photo) + Options("rings") +
                             " --json " + Quote(cap / "r.json"),
                         cap, RunBounds{});
    EXPECT_EQ(run.exit_code, 0) << run.err;
    const auto r = nlohmann::json::parse(ReadFile(cap / "r.json"));
    return std::make_pair(r["input"]["format"].get<std::string>(),
                          r["radius_of_curvature_mm"].get<double>());
  };
  const auto png = radius(Root() / "good-a.png", "png");
  const auto png_as_tif = radius(Root() / "renamed/png-as.tif", "png-as-tif");
  const auto tif = radius(Root() / "good-a.tif", "tif");
  const auto tif_as_jpg = radius(Root() / "renamed/tiff-as.jpg", "tif-as-jpg");
  EXPECT_EQ(png_as_tif.first, "png");
  EXPECT_EQ(tif_as_jpg.first, "tiff");
  EXPECT_EQ(png_as_tif.second, png.second);
  EXPECT_EQ(tif_as_jpg.second, tif.second);
}

// A lot over a folder holding the corpus and two good photos: every input
// is accounted for, the good parts get verdicts, the exit code is 2.
TEST_F(MalformedInputE2e, InspectTurnsEachIntoAnErrorRow) {
  bool as_nobody = false;
  const std::string no_nobody = Unprivileged(&as_nobody);
  const fs::path photos = Root() / "lot-photos";
  fs::remove_all(photos);
  fs::create_directories(photos);
  fs::copy_file(Root() / "good-a.tif", photos / "good-a.tif");
  fs::copy_file(Root() / "good-b.tif", photos / "good-b.tif");
  std::vector<Case> bad;
  for (const Case& k : Cases()) {
    if (k.needs_unprivileged && !no_nobody.empty()) {
      std::cout << "[ skipped  ] " << k.name << ": " << no_nobody << "\n";
      continue;
    }
    bad.push_back(k);
    const fs::path from = Root() / "corpus" / k.name;
    if (fs::is_symlink(fs::symlink_status(from))) {
      fs::create_symlink(fs::read_symlink(from), photos / k.name);
    } else if (fs::is_directory(from)) {
      fs::create_directories(photos / k.name);
    } else if (k.needs_unprivileged) {
      // Unreadable for us too when not root: made again, not copied.
      fs::copy_file(Root() / "good-a.tif", photos / k.name);
      fs::permissions(photos / k.name, fs::perms::none);
    } else {
      fs::copy_file(from, photos / k.name);
    }
  }
  const bool drop = as_nobody && no_nobody.empty();
  const fs::path out = Root() / "lot-out";
  fs::remove_all(out);
  fs::create_directories(out);
  if (drop) {
    ASSERT_EQ(::chown(out.c_str(), kNobodyId, kNobodyId), 0);
  }
  std::ofstream(Root() / "job.ini") << figura::test::LotJobText();
  RunBounds bounds;
  bounds.seconds = 300;
  bounds.as_nobody = drop;
  const CommandOutcome run = RunFiguraBounded(
      "inspect --job " + Quote(Root() / "job.ini") + " --out " + Quote(out) +
          " --jobs 2 --progress lines " + Quote(photos),
      Root() / "cap-inspect", bounds);
  EXPECT_EQ(run.exit_code, 2) << run.err;
  EXPECT_EQ(run.err.find("internal error"), std::string::npos) << run.err;
  const auto summary = nlohmann::json::parse(ReadFile(out / "summary.json"));
  EXPECT_EQ(summary["exit_code"], 2);
  EXPECT_EQ(summary["inputs_total"], bad.size() + 2);
  ASSERT_EQ(summary["parts"].size(), bad.size() + 2);
  int errors = 0;
  for (const auto& p : summary["parts"]) {
    const std::string part = p["part"];
    SCOPED_TRACE(part);
    if (part.rfind("good-", 0) == 0) {
      EXPECT_EQ(p["verdict"], "pass");
      EXPECT_TRUE(fs::exists(out / p["pdf"].get<std::string>()));
      continue;
    }
    ++errors;
    EXPECT_EQ(p["status"], "error");
    EXPECT_EQ(p["verdict"], "");
    const std::string message = p["message"];
    bool named = false;
    for (const Case& k : bad) {
      if (fs::path(k.name).stem() == part) {
        named = true;
        EXPECT_NE(Lower(message).find(k.problem), std::string::npos) << message;
      }
    }
    EXPECT_TRUE(named) << "an unexpected part " << part;
    EXPECT_EQ(message.find('\n'), std::string::npos);
  }
  EXPECT_EQ(errors, static_cast<int>(bad.size()));
  // summary.csv: a header and one row per input; index.html names each.
  const std::string csv = ReadFile(out / "summary.csv");
  EXPECT_EQ(CountLines(csv), static_cast<int>(bad.size()) + 3) << csv;
  const std::string html = ReadFile(out / "index.html");
  for (const Case& k : bad) {
    EXPECT_NE(html.find(fs::path(k.name).stem().string()), std::string::npos)
        << k.name;
  }
  // Thumbnails are inline base64 (data: URIs), whose letters may spell
  // "Inf" by chance: they are left out of the scan.
  // (A plain scan: std::regex recurses per character and overflows the
  // stack on long runs.)
  std::string html_text;
  for (std::size_t at = 0; at < html.size();) {
    const std::size_t b64 = html.find(";base64,", at);
    if (b64 == std::string::npos) {
      html_text.append(html, at, std::string::npos);
      break;
    }
    html_text.append(html, at, b64 - at);
    at = html.find_first_not_of(
        "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/=",
        b64 + 8);
    if (at == std::string::npos) at = html.size();
  }
  std::vector<std::string> texts = {run.out, run.err, csv, html_text,
                                    ReadFile(out / "summary.json")};
  // Each part's JSON, and its PDF's text (poppler's pdftotext, test-only).
  const bool pdftotext = Succeeds("command -v pdftotext");
  for (const auto& p : summary["parts"]) {
    if (!p["result_json"].get<std::string>().empty())
      texts.push_back(ReadFile(out / p["result_json"].get<std::string>()));
    const std::string pdf = p["pdf"];
    if (pdf.empty() || !pdftotext) continue;
    const fs::path txt = Root() / (p["part"].get<std::string>() + ".txt");
    ASSERT_TRUE(Succeeds("pdftotext " + Quote(out / pdf) + " " + Quote(txt)));
    texts.push_back(ReadFile(txt));
  }
  for (const std::string& text : texts) {
    const auto hits = NonFiniteTokens(text);
    EXPECT_TRUE(hits.empty()) << hits.front();
  }
}

}  // namespace
}  // namespace figura::e2e
