#include "surface/zernike.h"

#include <algorithm>
#include <array>
#include <cassert>
#include <cmath>
#include <cstdlib>

namespace figura {

namespace {

// R_k^l for all k <= max_order, l <= k, k - l even, at rho: table[k][l] in a
// flat array with stride max_order + 1 (entries with k - l odd are unused).
void RadialTable(int max_order, double rho, std::vector<double>* table) {
  const int stride = max_order + 1;
  table->assign(static_cast<std::size_t>(stride * stride), 0.0);
  auto at = [&](int k, int l) -> double& {
    return (*table)[static_cast<std::size_t>(k * stride + l)];
  };
  double power = 1.0;
  for (int k = 0; k <= max_order; ++k) {
    at(k, k) = power;  // R_k^k = rho^k
    for (int l = k - 2; l >= 0; l -= 2) {
      const double upper = (l + 1 <= k - 1) ? at(k - 1, l + 1) : 0.0;
      const double lower = at(k - 1, std::abs(l - 1));
      const double prev = (k >= 2 && l <= k - 2) ? at(k - 2, l) : 0.0;
      at(k, l) = rho * (lower + upper) - prev;
    }
    power *= rho;
  }
}

double Factorial(int k) {
  double f = 1.0;
  for (int i = 2; i <= k; ++i) f *= i;
  return f;
}

double Binomial(int n, int k) {
  return Factorial(n) / (Factorial(k) * Factorial(n - k));
}

}  // namespace

bool IsZernikeMode(int n, int m) {
  return n >= 0 && n <= kZernikeMaxOrder && std::abs(m) <= n &&
         (n - std::abs(m)) % 2 == 0;
}

int ZernikeIndex(int n, int m) {
  assert(IsZernikeMode(n, m));
  return (n * (n + 2) + m) / 2;
}

int ZernikeCount(int max_order) {
  return (max_order + 1) * (max_order + 2) / 2;
}

ZernikeMode ZernikeModeOf(int j) {
  assert(j >= 0 && j < ZernikeCount(kZernikeMaxOrder));
  int n = 0;
  while (ZernikeCount(n) <= j) ++n;
  const int m = 2 * j - n * (n + 2);
  return ZernikeMode{n, m};
}

int NollIndex(int n, int m) {
  assert(IsZernikeMode(n, m));
  const int base = n * (n + 1) / 2;
  if (m == 0) return base + 1;
  const int first = base + std::abs(m);  // the pair is first, first + 1
  const bool first_even = first % 2 == 0;
  // Cosine terms (m > 0) take the even index, sine terms the odd one.
  if (m > 0) return first_even ? first : first + 1;
  return first_even ? first + 1 : first;
}

ZernikeMode NollMode(int noll) {
  assert(noll >= 1 && noll <= ZernikeCount(kZernikeMaxOrder));
  for (int n = 0; n <= kZernikeMaxOrder; ++n) {
    for (int m = -n; m <= n; m += 2) {
      if (NollIndex(n, m) == noll) return ZernikeMode{n, m};
    }
  }
  assert(false);
  return {};
}

double ZernikeNorm(int n, int m) {
  return std::sqrt(2.0 * (n + 1) / (m == 0 ? 2.0 : 1.0));
}

double ZernikeRadial(int n, int m, double rho) {
  assert(IsZernikeMode(n, m));
  std::vector<double> table;
  RadialTable(n, rho, &table);
  return table[static_cast<std::size_t>(n * (n + 1) + std::abs(m))];
}

double Zernike(int j, double rho, double theta) {
  const ZernikeMode mode = ZernikeModeOf(j);
  const double radial =
      ZernikeNorm(mode.n, mode.m) * ZernikeRadial(mode.n, mode.m, rho);
  if (mode.m >= 0) return radial * std::cos(mode.m * theta);
  return radial * std::sin(-mode.m * theta);
}

ZernikeBasis::ZernikeBasis(int count) : count_(count) {
  assert(count >= 1 && count <= ZernikeCount(kZernikeMaxOrder));
  modes_.reserve(static_cast<std::size_t>(count));
  for (int j = 0; j < count; ++j) modes_.push_back(ZernikeModeOf(j));
  max_order_ = modes_.back().n;
}

void ZernikeBasis::Evaluate(double x, double y, std::span<double> out) const {
  assert(out.size() >= static_cast<std::size_t>(count_));
  const double rho = std::hypot(x, y);
  const double c1 = rho > 0.0 ? x / rho : 1.0;  // cos(theta)
  const double s1 = rho > 0.0 ? y / rho : 0.0;  // sin(theta)
  // cos(m theta), sin(m theta) by the Chebyshev recurrence.
  std::array<double, kZernikeMaxOrder + 1> cosm{};
  std::array<double, kZernikeMaxOrder + 1> sinm{};
  cosm[0] = 1.0;
  sinm[0] = 0.0;
  if (max_order_ >= 1) {
    cosm[1] = c1;
    sinm[1] = s1;
  }
  for (int k = 2; k <= max_order_; ++k) {
    const auto u = static_cast<std::size_t>(k);
    cosm[u] = 2.0 * c1 * cosm[u - 1] - cosm[u - 2];
    sinm[u] = 2.0 * c1 * sinm[u - 1] - sinm[u - 2];
  }
  std::vector<double> table;
  RadialTable(max_order_, rho, &table);
  for (int j = 0; j < count_; ++j) {
    const ZernikeMode mode = modes_[static_cast<std::size_t>(j)];
    const auto am = static_cast<std::size_t>(std::abs(mode.m));
    const double radial =
        ZernikeNorm(mode.n, mode.m) *
        table[static_cast<std::size_t>(mode.n * (max_order_ + 1)) + am];
    out[static_cast<std::size_t>(j)] =
        radial * (mode.m >= 0 ? cosm[am] : sinm[am]);
  }
}

double ZernikeBasis::Sum(std::span<const double> coefficients, double x,
                         double y) const {
  std::vector<double> values(static_cast<std::size_t>(count_));
  Evaluate(x, y, values);
  double sum = 0.0;
  const std::size_t k = std::min(values.size(), coefficients.size());
  for (std::size_t j = 0; j < k; ++j) sum += coefficients[j] * values[j];
  return sum;
}

ZernikePolynomial::ZernikePolynomial(std::span<const double> coefficients) {
  for (std::size_t j = 0; j < coefficients.size(); ++j) {
    if (coefficients[j] == 0.0) continue;
    const ZernikeMode mode = ZernikeModeOf(static_cast<int>(j));
    assert(mode.n <= kMaxOrder);
    degree_ = std::max(degree_, mode.n);
  }
  const int d = degree_ + 1;
  a_.assign(static_cast<std::size_t>(d * d), 0.0);
  auto at = [&](int p, int q) -> double& {
    return a_[static_cast<std::size_t>(p * d + q)];
  };
  for (std::size_t j = 0; j < coefficients.size(); ++j) {
    const double c = coefficients[j];
    if (c == 0.0) continue;
    const ZernikeMode mode = ZernikeModeOf(static_cast<int>(j));
    const int n = mode.n;
    const int am = std::abs(mode.m);
    const double scale = c * ZernikeNorm(n, mode.m);
    // Angular factor rho^|m| cos(m theta) = Re (x + i y)^|m|, or
    // rho^|m| sin(|m| theta) = Im (x + i y)^|m|: terms x^(|m|-k) y^k.
    for (int k = 0; k <= am; ++k) {
      const bool real_part = k % 2 == 0;
      if (real_part != (mode.m >= 0)) continue;
      const double sign = ((k / 2) % 2 == 0) ? 1.0 : -1.0;
      const double angular = sign * Binomial(am, k);
      // R_n^m(rho) / rho^|m| = sum_s (-1)^s (n-s)! / (s! ((n+m)/2-s)!
      // ((n-m)/2-s)!) (x^2 + y^2)^((n-|m|)/2 - s) (explicit sum, e.g. Born
      // & Wolf, Principles of Optics, sec. 9.2.1).
      for (int s = 0; s <= (n - am) / 2; ++s) {
        const double radial = ((s % 2 == 0) ? 1.0 : -1.0) * Factorial(n - s) /
                              (Factorial(s) * Factorial((n + am) / 2 - s) *
                               Factorial((n - am) / 2 - s));
        const int power = (n - am) / 2 - s;  // of (x^2 + y^2)
        for (int l = 0; l <= power; ++l) {
          at(am - k + 2 * l, k + 2 * (power - l)) +=
              scale * angular * radial * Binomial(power, l);
        }
      }
    }
  }
}

double ZernikePolynomial::operator()(double x, double y) const {
  std::vector<double> row;
  RowCoefficients(y, &row);
  return EvaluateRow(row, x);
}

void ZernikePolynomial::RowCoefficients(double y,
                                        std::vector<double>* out) const {
  const int d = degree_ + 1;
  out->assign(static_cast<std::size_t>(d), 0.0);
  for (int p = 0; p < d; ++p) {
    double v = 0.0;
    for (int q = d; q-- > 0;) {
      v = v * y + a_[static_cast<std::size_t>(p * d + q)];
    }
    (*out)[static_cast<std::size_t>(p)] = v;
  }
}

}  // namespace figura
