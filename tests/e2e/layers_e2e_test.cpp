// End-to-end: run the figura binary for `figura layers` and the top-level
// help/version, and check its output and exit codes.
#include <gtest/gtest.h>
#include <sys/wait.h>

#include <array>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <string>

#include "e2e/e2e_util.h"

namespace {

using figura::e2e::CountLines;
using Outcome = figura::e2e::CommandOutcome;

// Runs `figura ARGS`, capturing its output under a folder named after tag.
Outcome Figura(const std::string& args, const std::string& tag) {
  return figura::e2e::RunFigura(args, "layers_e2e_" + tag);
}

TEST(LayersE2e, CrownAirCrownJson) {
  const Outcome run = Figura(
      "layers --upper-index 1.5168 --gap-index 1 --lower-index 1.5168 --json -",
      "crown");
  ASSERT_EQ(run.exit_code, 0) << run.err;
  const nlohmann::json j = nlohmann::json::parse(run.out);
  // Half-wave rule (references.md, Newton's rings): contact dark in
  // reflection, bright in transmission.
  EXPECT_EQ(j.at("contact_reflected"), "dark");
  EXPECT_EQ(j.at("contact_transmitted"), "bright");
  EXPECT_NEAR(j.at("visibility_reflected").get<double>(), 1.0, 1e-9);
  // 2R/(1+R^2) with R = 4.22 % (references.md [derived]) = 0.0842.
  const double r = std::pow(0.5168 / 2.5168, 2);
  EXPECT_NEAR(j.at("visibility_transmitted").get<double>(), 2 * r / (1 + r * r),
              1e-9);
  EXPECT_NEAR(j.at("visibility_transmitted").get<double>(), 0.0842, 0.0001);
  // Default wavelength: mercury e, 546.074 nm (references.md; ISO 7944).
  const nlohmann::json& s = j.at("settings");
  EXPECT_NEAR(s.at("wavelength_nm").get<double>(), 546.074, 1e-9);
  EXPECT_EQ(s.at("wavelength_source"), "mercury-e");
  EXPECT_EQ(s.at("gap_index"), 1.0);
  EXPECT_EQ(j.at("tool").at("name"), "figura");
  EXPECT_FALSE(j.at("tool").at("version").get<std::string>().empty());
  EXPECT_EQ(j.at("status").at("state"), "ok");
  // First dark ring gaps k lambda / 2 (references.md).
  EXPECT_NEAR(j.at("reflected").at("minimum_gaps_nm")[1].get<double>(), 273.037,
              1e-9);
}

TEST(LayersE2e, ContactFluidAndHumanSummary) {
  const Outcome run = Figura(
      "layers --upper-index 1.5168 --gap-index 1.62 --lower-index 1.755 "
      "--wavelength 589.29nm",
      "fluid");
  ASSERT_EQ(run.exit_code, 0) << run.err;
  // Both reflections external: contact bright in reflection (half-wave rule,
  // Hecht, Optics, sec. 4.6).
  EXPECT_NE(run.out.find("reflected light"), std::string::npos) << run.out;
  const size_t reflected = run.out.find("reflected light");
  const size_t transmitted = run.out.find("transmitted light");
  ASSERT_NE(transmitted, std::string::npos);
  const std::string refl = run.out.substr(reflected, transmitted - reflected);
  EXPECT_NE(refl.find("contact bright"), std::string::npos) << refl;
  EXPECT_NE(run.out.substr(transmitted).find("contact dark"), std::string::npos)
      << run.out;
  // lambda / (4 n_gap) = 589.29 / 6.48 = 90.94 nm.
  EXPECT_NE(refl.find("90.94"), std::string::npos) << refl;
}

TEST(LayersE2e, BadOptionIsOneLineExit2) {
  const Outcome run = Figura("layers --gap-index 0.5", "badindex");
  EXPECT_EQ(run.exit_code, 2);
  EXPECT_EQ(CountLines(run.err), 1) << run.err;
  EXPECT_NE(run.err.find("--gap-index"), std::string::npos) << run.err;
  const Outcome matched =
      Figura("layers --upper-index 1.6 --gap-index 1.6 --lower-index 1.6", "m");
  EXPECT_EQ(matched.exit_code, 2);
  EXPECT_EQ(CountLines(matched.err), 1) << matched.err;
  const Outcome unknown = Figura("layers --gap-indx 1.2", "unknown");
  EXPECT_EQ(unknown.exit_code, 2);
  EXPECT_EQ(CountLines(unknown.err), 1) << unknown.err;
  EXPECT_NE(unknown.err.find("gap-indx"), std::string::npos) << unknown.err;
  const Outcome text = Figura("layers --upper-index glass", "text");
  EXPECT_EQ(text.exit_code, 2);
  EXPECT_EQ(CountLines(text.err), 1) << text.err;
  EXPECT_NE(text.err.find("upper-index"), std::string::npos) << text.err;
}

TEST(LayersE2e, BareNumberWavelengthNamesUnits) {
  const Outcome run = Figura("layers --wavelength 546", "bare");
  EXPECT_EQ(run.exit_code, 2);
  EXPECT_EQ(CountLines(run.err), 1) << run.err;
  EXPECT_NE(run.err.find("nm"), std::string::npos) << run.err;
  EXPECT_NE(run.err.find("mm"), std::string::npos) << run.err;
  EXPECT_TRUE(run.out.empty());
}

TEST(LayersE2e, HelpAndVersion) {
  const Outcome help = Figura("--help", "help");
  EXPECT_EQ(help.exit_code, 0);
  EXPECT_NE(help.out.find("layers"), std::string::npos) << help.out;
  const Outcome version = Figura("--version", "version");
  EXPECT_EQ(version.exit_code, 0);
  EXPECT_EQ(version.out.rfind("figura ", 0), 0U) << version.out;
  const Outcome layers_help = Figura("layers --help", "lhelp");
  EXPECT_EQ(layers_help.exit_code, 0);
  for (const char* option : {"--upper-index", "--gap-index", "--lower-index",
                             "--wavelength", "--json", "--config"}) {
    EXPECT_NE(layers_help.out.find(option), std::string::npos) << option;
  }
}

TEST(LayersE2e, ConfigFileUsesOptionNames) {
  const std::filesystem::path ini =
      std::filesystem::path(FIGURA_TEST_TMP) / "layers_e2e.ini";
  {
    std::ofstream f(ini);
    f << "# contact fluid between crown and flint\n"
         "upper-index = 1.5168\ngap-index = 1.62\nlower-index = 1.755\n"
         "wavelength = sodium\n";
  }
  const Outcome run =
      Figura("layers --config '" + ini.string() + "' --json -", "config");
  ASSERT_EQ(run.exit_code, 0) << run.err;
  const nlohmann::json j = nlohmann::json::parse(run.out);
  EXPECT_EQ(j.at("contact_reflected"), "bright");
  EXPECT_EQ(j.at("settings").at("gap_index"), 1.62);
  // Sodium doublet mean 589.2938 nm (references.md, RP Photonics).
  EXPECT_NEAR(j.at("settings").at("wavelength_nm").get<double>(), 589.2938,
              1e-9);
  // The command line wins over the file.
  const Outcome over =
      Figura("layers --config '" + ini.string() + "' --gap-index 1.0 --json -",
             "config_override");
  ASSERT_EQ(over.exit_code, 0) << over.err;
  EXPECT_EQ(nlohmann::json::parse(over.out).at("contact_reflected"), "dark");
}

}  // namespace
