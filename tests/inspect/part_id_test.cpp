// Part ids from file-name patterns and from a manifest CSV; the CSV reading
// is checked against Python's csv module (the RFC 4180 reference reader in
// the Debian python3 package, run test-only through /usr/bin/python3).
#include "inspect/part_id.h"

#include <gtest/gtest.h>

#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <string>

#include "core/error.h"

namespace figura {
namespace {

namespace fs = std::filesystem;

fs::path Scratch(const std::string& name) {
  fs::path dir = fs::path(FIGURA_TEST_TMP) / "inspect_part_id" / name;
  fs::remove_all(dir);
  fs::create_directories(dir);
  return dir;
}

std::string ErrorOf(const PartNamer& namer, const std::string& file) {
  try {
    (void)namer.Identify(file);
  } catch (const InputError& e) {
    return e.what();
  }
  return "(no error)";
}

TEST(PartId, StemByDefault) {
  const PartNamer namer({});
  EXPECT_EQ(namer.Identify("photos/P-017.tif").part, "P-017");
  EXPECT_NE(ErrorOf(namer, "photos/part 17.tif").find("may hold only"),
            std::string::npos);
}

TEST(PartId, PatternWithPartAndSerial) {
  PartIdOptions o;
  o.pattern = "L0001_{part}_{serial}_*.png";
  const PartNamer namer(o);
  const PartIdentity id = namer.Identify("/x/L0001_P-03_SN7781_cam2.png");
  EXPECT_EQ(id.part, "P-03");
  EXPECT_EQ(id.serial, "SN7781");
  // Literal dots are literal, not "any character".
  EXPECT_NE(ErrorOf(namer, "L0001_P-03_SN7781_cam2xpng").find("does not match"),
            std::string::npos);
}

TEST(PartId, PatternErrors) {
  PartIdOptions o;
  o.pattern = "{serial}.tif";
  EXPECT_THROW(PartNamer{o}, InputError);  // no {part}
  o.pattern = "{part}_{lens}.tif";
  EXPECT_THROW(PartNamer{o}, InputError);
}

TEST(PartId, ManifestMatchesPythonCsv) {
  const fs::path dir = Scratch("manifest");
  const fs::path csv = dir / "m.csv";
  std::ofstream(csv) << "notes,file,part,serial\r\n"
                     << "\"chip at edge, 2 o'clock\",photos/a.tif,P-1,S100\r\n"
                     << "\"said \"\"ok\"\"\",b.tif,P-2,\r\n"
                     << "plain,c.tif,P-3,S300\r\n";
  PartIdOptions o;
  o.manifest = csv;
  const PartNamer namer(o);
  const PartIdentity a = namer.Identify("photos/a.tif");
  const PartIdentity b = namer.Identify("elsewhere/b.tif");  // by file name
  EXPECT_EQ(a.part, "P-1");
  EXPECT_EQ(b.part, "P-2");
  EXPECT_EQ(b.serial, "");
  EXPECT_NE(ErrorOf(namer, "d.tif").find("not listed"), std::string::npos);
  // Reference: Python's csv module reads the same notes.
  const fs::path out = dir / "py.txt";
  const std::string cmd =
      "/usr/bin/python3 -c \"import csv,sys; r=list(csv.DictReader(open(sys."
      "argv[1], newline=''))); open(sys.argv[2],'w').write(r[0]['notes']+'|'+"
      "r[1]['notes'])\" '" +
      csv.string() + "' '" + out.string() + "'";
  if (std::system(cmd.c_str()) != 0) GTEST_SKIP() << "/usr/bin/python3 absent";
  std::ifstream in(out);
  std::string python;
  std::getline(in, python);
  EXPECT_EQ(python, a.notes + "|" + b.notes);
  EXPECT_EQ(a.notes, "chip at edge, 2 o'clock");
}

TEST(PartId, ManifestErrorsNameTheLine) {
  const fs::path dir = Scratch("manifest_bad");
  const fs::path csv = dir / "m.csv";
  std::ofstream(csv) << "file,part\na.tif,P-1\nb.tif,P-1\n";
  PartIdOptions o;
  o.manifest = csv;
  try {
    const PartNamer namer(o);
    FAIL() << "a part listed twice was accepted";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("m.csv:3"), std::string::npos)
        << e.what();
  }
  std::ofstream(csv) << "name,id\na.tif,P-1\n";
  EXPECT_THROW(PartNamer{o}, InputError);
}

TEST(PartId, ManifestContactColumnOverridesPerPart) {
  const fs::path dir = Scratch("manifest_contact");
  const fs::path csv = dir / "m.csv";
  // Column order is free; an empty cell keeps the job's contact.
  std::ofstream(csv) << "file,contact,part\n"
                     << "a.tif,edge,P-1\n"
                     << "b.tif,,P-2\n"
                     << "c.tif, center ,P-3\n";
  PartIdOptions o;
  o.manifest = csv;
  const PartNamer namer(o);
  const PartIdentity a = namer.Identify("a.tif");
  ASSERT_TRUE(a.contact.has_value());
  EXPECT_EQ(*a.contact, Contact::kEdge);
  EXPECT_FALSE(namer.Identify("b.tif").contact.has_value());
  const PartIdentity c = namer.Identify("c.tif");
  ASSERT_TRUE(c.contact.has_value());
  EXPECT_EQ(*c.contact, Contact::kCentre);
  // Without the column every part keeps the job's contact.
  std::ofstream(csv) << "file,part\na.tif,P-1\n";
  EXPECT_FALSE(PartNamer(o).Identify("a.tif").contact.has_value());
}

TEST(PartId, ManifestBadContactNamesFileAndLine) {
  const fs::path dir = Scratch("manifest_contact_bad");
  const fs::path csv = dir / "m.csv";
  std::ofstream(csv) << "file,part,contact\na.tif,P-1,centre\n"
                     << "b.tif,P-2,rim\n";
  PartIdOptions o;
  o.manifest = csv;
  try {
    const PartNamer namer(o);
    FAIL() << "contact 'rim' was accepted";
  } catch (const InputError& e) {
    const std::string what = e.what();
    EXPECT_NE(what.find("m.csv:3: contact:"), std::string::npos) << what;
    EXPECT_NE(what.find("'rim'"), std::string::npos) << what;
    EXPECT_EQ(what.find('\n'), std::string::npos) << what;  // one line
  }
}

TEST(PartId, CsvSplitQuoting) {
  // RFC 4180, section 2: quoted fields hold commas and doubled quotes.
  const auto f = SplitCsvLine(R"(a,"b,c","d""e",)", "x");
  ASSERT_EQ(f.size(), 4U);
  EXPECT_EQ(f[1], "b,c");
  EXPECT_EQ(f[2], "d\"e");
  EXPECT_EQ(f[3], "");
  EXPECT_THROW(SplitCsvLine("\"open", "x"), InputError);
}

}  // namespace
}  // namespace figura
