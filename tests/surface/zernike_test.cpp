#include "surface/zernike.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <numbers>
#include <sstream>
#include <string>
#include <vector>

#include "check_record.h"

namespace figura {
namespace {

constexpr double kPi = std::numbers::pi;

// The ISO 24157 table as printed in ../shared/references.md (ISO 24157 /
// Thibos et al., J. Refract. Surg. 18(5) S652, 2002; Noll column from Noll,
// JOSA 66, 207, 1976).
struct TableRow {
  int j, n, m, noll;
  double (*z)(double rho, double theta);
};

const TableRow kTable[] = {
    {0, 0, 0, 1, [](double, double) { return 1.0; }},
    {1, 1, -1, 3, [](double r, double t) { return 2 * r * std::sin(t); }},
    {2, 1, 1, 2, [](double r, double t) { return 2 * r * std::cos(t); }},
    {3, 2, -2, 5,
     [](double r, double t) {
       return std::sqrt(6.0) * r * r * std::sin(2 * t);
     }},
    {4, 2, 0, 4,
     [](double r, double) { return std::sqrt(3.0) * (2 * r * r - 1); }},
    {5, 2, 2, 6,
     [](double r, double t) {
       return std::sqrt(6.0) * r * r * std::cos(2 * t);
     }},
    {6, 3, -3, 9,
     [](double r, double t) {
       return std::sqrt(8.0) * std::pow(r, 3) * std::sin(3 * t);
     }},
    {7, 3, -1, 7,
     [](double r, double t) {
       return std::sqrt(8.0) * (3 * std::pow(r, 3) - 2 * r) * std::sin(t);
     }},
    {8, 3, 1, 8,
     [](double r, double t) {
       return std::sqrt(8.0) * (3 * std::pow(r, 3) - 2 * r) * std::cos(t);
     }},
    {9, 3, 3, 10,
     [](double r, double t) {
       return std::sqrt(8.0) * std::pow(r, 3) * std::cos(3 * t);
     }},
    {10, 4, -4, 15,
     [](double r, double t) {
       return std::sqrt(10.0) * std::pow(r, 4) * std::sin(4 * t);
     }},
    {11, 4, -2, 13,
     [](double r, double t) {
       return std::sqrt(10.0) * (4 * std::pow(r, 4) - 3 * r * r) *
              std::sin(2 * t);
     }},
    {12, 4, 0, 11,
     [](double r, double) {
       return std::sqrt(5.0) * (6 * std::pow(r, 4) - 6 * r * r + 1);
     }},
    {13, 4, 2, 12,
     [](double r, double t) {
       return std::sqrt(10.0) * (4 * std::pow(r, 4) - 3 * r * r) *
              std::cos(2 * t);
     }},
    {14, 4, 4, 14,
     [](double r, double t) {
       return std::sqrt(10.0) * std::pow(r, 4) * std::cos(4 * t);
     }},
};

TEST(Zernike, IsoTableIndicesAndPolynomials) {
  // ISO 24157 / Thibos et al. 2002 table, references.md.
  ZernikeBasis basis(15);
  std::vector<double> values(15);
  for (const TableRow& row : kTable) {
    EXPECT_EQ(ZernikeIndex(row.n, row.m), row.j);
    EXPECT_EQ(ZernikeModeOf(row.j), (ZernikeMode{row.n, row.m}));
    EXPECT_EQ(NollIndex(row.n, row.m), row.noll) << "j=" << row.j;
    EXPECT_EQ(NollMode(row.noll), (ZernikeMode{row.n, row.m}));
    for (double rho : {0.0, 0.3, 0.77, 1.0}) {
      for (double theta : {0.0, 0.4, 2.1, -2.9}) {
        EXPECT_NEAR(Zernike(row.j, rho, theta), row.z(rho, theta), 1e-13)
            << "j=" << row.j << " rho=" << rho << " theta=" << theta;
        const double x = rho * std::cos(theta);
        const double y = rho * std::sin(theta);
        basis.Evaluate(x, y, values);
        EXPECT_NEAR(values[static_cast<std::size_t>(row.j)], row.z(rho, theta),
                    1e-13);
      }
    }
  }
}

TEST(Zernike, IndexRoundTripAndNormalisation) {
  for (int j = 0; j < ZernikeCount(kZernikeMaxOrder); ++j) {
    const ZernikeMode mode = ZernikeModeOf(j);
    ASSERT_TRUE(IsZernikeMode(mode.n, mode.m));
    EXPECT_EQ(ZernikeIndex(mode.n, mode.m), j);
    EXPECT_EQ(NollMode(NollIndex(mode.n, mode.m)), mode);
  }
  // N = sqrt(2(n+1)/(1+delta_m0)), ISO 24157.
  EXPECT_DOUBLE_EQ(ZernikeNorm(2, 0), std::sqrt(3.0));
  EXPECT_DOUBLE_EQ(ZernikeNorm(3, 1), std::sqrt(8.0));
  EXPECT_FALSE(IsZernikeMode(3, 2));
  EXPECT_FALSE(IsZernikeMode(2, 4));
}

TEST(Zernike, RadialIsOneAtTheEdgeToOrderThirty) {
  // R_n^m(1) = 1 for every mode (references.md; Andersen 2018 reports the
  // recurrence accurate to <= 5e-14 up to order 30).
  for (int n = 0; n <= kZernikeMaxOrder; ++n) {
    for (int m = n % 2; m <= n; m += 2) {
      EXPECT_NEAR(ZernikeRadial(n, m, 1.0), 1.0, 5e-14) << n << " " << m;
    }
  }
}

// Gauss-Legendre nodes and weights on [0, 1] (Newton iteration on the
// Legendre polynomial, Numerical Recipes' gauleg [practice]).
void GaussLegendre(int count, std::vector<double>* x, std::vector<double>* w) {
  x->resize(static_cast<std::size_t>(count));
  w->resize(static_cast<std::size_t>(count));
  for (int i = 0; i < count; ++i) {
    double z = std::cos(kPi * (i + 0.75) / (count + 0.5));
    double dp = 0.0;
    for (int it = 0; it < 100; ++it) {
      double p0 = 1.0;
      double p1 = 0.0;
      for (int k = 1; k <= count; ++k) {
        const double p2 = p1;
        p1 = p0;
        p0 = ((2.0 * k - 1.0) * z * p1 - (k - 1.0) * p2) / k;
      }
      dp = count * (z * p0 - p1) / (z * z - 1.0);
      const double dz = p0 / dp;
      z -= dz;
      if (std::abs(dz) < 1e-15) break;
    }
    (*x)[static_cast<std::size_t>(i)] = 0.5 * (1.0 - z);
    (*w)[static_cast<std::size_t>(i)] = 1.0 / ((1.0 - z * z) * dp * dp);
  }
}

TEST(Zernike, OrthonormalOverTheUnitDisk) {
  // RMS normalisation (ISO 24157): the mean of Z_i Z_j over the unit disk is
  // delta_ij. Quadrature: Gauss-Legendre in rho (weight rho), the
  // trapezoidal rule in theta; both exact for these polynomial degrees.
  const int count = ZernikeCount(8);  // j < 45
  ZernikeBasis basis(count);
  std::vector<double> rx;
  std::vector<double> rw;
  GaussLegendre(16, &rx, &rw);
  const int n_theta = 40;
  std::vector<double> gram(static_cast<std::size_t>(count * count), 0.0);
  std::vector<double> v(static_cast<std::size_t>(count));
  for (std::size_t i = 0; i < rx.size(); ++i) {
    for (int k = 0; k < n_theta; ++k) {
      const double theta = 2.0 * kPi * k / n_theta;
      basis.Evaluate(rx[i] * std::cos(theta), rx[i] * std::sin(theta), v);
      // Mean over the disk: (1/pi) integral rho drho dtheta.
      const double weight = rw[i] * rx[i] * (2.0 * kPi / n_theta) / kPi;
      for (int a = 0; a < count; ++a) {
        for (int b = 0; b < count; ++b) {
          gram[static_cast<std::size_t>(a * count + b)] +=
              weight * v[static_cast<std::size_t>(a)] *
              v[static_cast<std::size_t>(b)];
        }
      }
    }
  }
  for (int a = 0; a < count; ++a) {
    for (int b = 0; b < count; ++b) {
      EXPECT_NEAR(gram[static_cast<std::size_t>(a * count + b)],
                  a == b ? 1.0 : 0.0, 1e-12)
          << a << "," << b;
    }
  }
}

TEST(Zernike, RadialMatchesNumpyExplicitSum) {
  // Reference: the explicit factorial sum (Born & Wolf, sec. 9.2.1)
  // evaluated by numpy under Debian's /usr/bin/python3 (test-only).
  const char* script =
      "/usr/bin/python3 -c \"\n"
      "import numpy as np\n"
      "from math import factorial as f\n"
      "rho = np.array([0.0, 0.25, 0.5, 0.9, 1.0])\n"
      "for n in range(0, 13):\n"
      "  for m in range(n % 2, n + 1, 2):\n"
      "    r = sum((-1)**s * f(n-s) / (f(s) * f((n+m)//2-s) * f((n-m)//2-s))"
      " * rho**(n-2*s) for s in range((n-m)//2+1))\n"
      "    print(n, m, *['%.17g' % v for v in np.atleast_1d(r)])\n"
      "\" 2>/dev/null";
  FILE* pipe = popen(script, "r");
  ASSERT_NE(pipe, nullptr);
  std::string text;
  char buffer[4096];
  while (fgets(buffer, sizeof buffer, pipe) != nullptr) text += buffer;
  const int rc = pclose(pipe);
  if (rc != 0 || text.empty())
    GTEST_SKIP() << "/usr/bin/python3 with numpy not available";
  std::istringstream in(text);
  const double rhos[] = {0.0, 0.25, 0.5, 0.9, 1.0};
  int n = 0;
  int m = 0;
  int rows = 0;
  double worst_numpy = 0.0;
  while (in >> n >> m) {
    for (double rho : rhos) {
      double expected = 0.0;
      in >> expected;
      EXPECT_NEAR(ZernikeRadial(n, m, rho), expected, 1e-12)
          << "n=" << n << " m=" << m << " rho=" << rho;
      worst_numpy =
          std::max(worst_numpy, std::abs(ZernikeRadial(n, m, rho) - expected));
    }
    ++rows;
  }
  figura::testing::RecordCheck(
      "Zernike radial polynomials vs numpy factorial sum (worst)",
      "numpy (Debian python3-numpy), explicit factorial formula", 0.0,
      worst_numpy, 1e-12, "");
  EXPECT_EQ(rows, 49);  // modes with n <= 12 and m >= 0
}

TEST(ZernikePolynomial, CartesianExpansionMatchesRecurrence) {
  // Every mode up to the expansion's limit, one at a time and all together
  // with fixed pseudo-random coefficients (seeded LCG [practice]).
  const int count = ZernikeCount(ZernikePolynomial::kMaxOrder);
  ZernikeBasis basis(count);
  std::vector<double> v(static_cast<std::size_t>(count));
  std::vector<double> all(static_cast<std::size_t>(count));
  std::uint64_t state = 12345;
  for (double& c : all) {
    state = state * 6364136223846793005ULL + 1442695040888963407ULL;
    c = static_cast<double>(state >> 11) / 9007199254740992.0 - 0.5;
  }
  const ZernikePolynomial poly_all(all);
  EXPECT_EQ(poly_all.degree(), ZernikePolynomial::kMaxOrder);
  for (int j = 0; j < count; ++j) {
    std::vector<double> one(static_cast<std::size_t>(j + 1), 0.0);
    one.back() = 1.0;
    const ZernikePolynomial poly(one);
    for (double x : {-0.9, -0.3, 0.0, 0.45, 0.7}) {
      for (double y : {-0.6, 0.0, 0.2, 0.7}) {
        basis.Evaluate(x, y, v);
        EXPECT_NEAR(poly(x, y), v[static_cast<std::size_t>(j)], 1e-10)
            << "j=" << j;
        if (j == 0) {
          double sum = 0.0;
          for (int k = 0; k < count; ++k) {
            sum += all[static_cast<std::size_t>(k)] *
                   v[static_cast<std::size_t>(k)];
          }
          EXPECT_NEAR(poly_all(x, y), sum, 1e-9);
          EXPECT_NEAR(basis.Sum(all, x, y), sum, 1e-12);
        }
      }
    }
  }
  const ZernikePolynomial empty(std::vector<double>{});
  EXPECT_EQ(empty(0.3, 0.2), 0.0);
}

}  // namespace
}  // namespace figura
