// The README's test command (b) and .ci/run must be the same command, so
// that CI runs exactly what a user is told to run.
#include <gtest/gtest.h>

#include <string>
#include <vector>

#include "e2e/e2e_util.h"

namespace {

using figura::e2e::ReadFile;

// The bodies of the ```sh blocks of a Markdown text.
std::vector<std::string> ShellBlocks(const std::string& md) {
  std::vector<std::string> out;
  std::size_t pos = 0;
  while ((pos = md.find("```sh\n", pos)) != std::string::npos) {
    const std::size_t start = pos + 6;
    const std::size_t end = md.find("```", start);
    if (end == std::string::npos) break;
    out.push_back(md.substr(start, end - start));
    pos = end + 3;
  }
  return out;
}

TEST(Readme, CiRunsTheReadmeTestCommand) {
  const std::string readme =
      ReadFile(std::string(FIGURA_SOURCE_DIR) + "/README.md");
  const std::vector<std::string> blocks = ShellBlocks(readme);
  ASSERT_GE(blocks.size(), 2U) << "README needs the two quick-start commands";
  std::string test_command = blocks[1];
  while (!test_command.empty() && test_command.back() == '\n')
    test_command.pop_back();
  EXPECT_EQ(test_command.find('\n'), std::string::npos)
      << "command (b) is one line";
  const std::string ci = ReadFile(std::string(FIGURA_SOURCE_DIR) + "/.ci/run");
  EXPECT_NE(ci.find("\n" + test_command + "\n"), std::string::npos)
      << ".ci/run must contain README command (b) verbatim:\n"
      << test_command;
}

}  // namespace
