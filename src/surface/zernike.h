// Zernike circle polynomials in the ISO 24157 convention: single index
// j = (n(n+2)+m)/2 with m < 0 for the sine terms, RMS normalisation
// N = sqrt(2(n+1)/(1+delta_m0)) over the unit disk (ISO 24157:2008; the same
// scheme as Thibos et al., J. Refract. Surg. 18(5) S652, 2002):
//   Z_j(rho, theta) = N_n^m R_n^|m|(rho) cos(m theta)    for m >= 0,
//                   = -N_n^m R_n^|m|(rho) sin(m theta)   for m < 0,
// i.e. Z_1 = 2 rho sin(theta), Z_2 = 2 rho cos(theta).
// Coordinates are surface coordinates (../shared/design.md): x right, y up,
// origin at the aperture centre, rho = 1 at the evaluated edge, theta
// counter-clockwise from +x.
#pragma once

#include <span>
#include <vector>

namespace figura {

// Radial order n >= 0 and azimuthal frequency m (|m| <= n, n - |m| even).
struct ZernikeMode {
  int n = 0;
  int m = 0;
  friend bool operator==(ZernikeMode, ZernikeMode) = default;
};

// Highest radial order accepted anywhere in this file. The radial
// recurrence stays accurate far beyond it (Andersen, Opt. Express 26(15)
// 18878, 2018); the Cartesian expansion (ZernikePolynomial) is limited by
// cancellation in its monomial coefficients, see there.
inline constexpr int kZernikeMaxOrder = 30;

// True when (n, m) names a Zernike polynomial (0 <= n <= kZernikeMaxOrder,
// |m| <= n, n - |m| even).
bool IsZernikeMode(int n, int m);

// ISO 24157 single index j = (n(n+2)+m)/2 (j = 0 is piston). Asserts a valid
// mode.
int ZernikeIndex(int n, int m);
// Inverse of ZernikeIndex. Asserts 0 <= j < ZernikeCount(kZernikeMaxOrder).
ZernikeMode ZernikeModeOf(int j);
// Number of polynomials with radial order <= max_order: (n+1)(n+2)/2.
int ZernikeCount(int max_order);

// Noll's index (J. Opt. Soc. Am. 66(3) 207, 1976; starts at 1 for piston;
// even index for cosine terms, odd for sine terms, ascending |m| within an
// order). For documentation and cross-reference only: figura uses the ISO
// index everywhere. Asserts a valid mode.
int NollIndex(int n, int m);
// Inverse of NollIndex. Asserts 1 <= noll <= ZernikeCount(kZernikeMaxOrder).
ZernikeMode NollMode(int noll);

// The RMS normalisation N_n^m = sqrt(2(n+1)/(1+delta_m0)) (ISO 24157).
double ZernikeNorm(int n, int m);

// Radial polynomial R_n^|m|(rho) (unnormalised, R_n^m(1) = 1) by the
// three-term recurrence R_n^m = rho (R_{n-1}^{|m-1|} + R_{n-1}^{m+1}) -
// R_{n-2}^m with R_n^n = rho^n (Shakibaei & Paramesran, Opt. Lett. 38(14)
// 2487, 2013 [memory]; accuracy studied by Andersen 2018). Asserts a valid
// mode.
double ZernikeRadial(int n, int m, double rho);

// Z_j(rho, theta), RMS-normalised (see the top of this file).
double Zernike(int j, double rho, double theta);

// All polynomials Z_0 .. Z_{count-1} at many points: the per-point work
// (powers of rho, cos/sin of m theta by the Chebyshev recurrence, the radial
// table) is done once per point for every j, with no trigonometric calls.
class ZernikeBasis {
 public:
  // Polynomials j = 0 .. count-1; asserts 1 <= count <=
  // ZernikeCount(kZernikeMaxOrder).
  explicit ZernikeBasis(int count);

  // Number of polynomials evaluated.
  [[nodiscard]] int count() const { return count_; }
  // Highest radial order among them.
  [[nodiscard]] int max_order() const { return max_order_; }

  // Writes Z_j(x, y), j < count, to out[0..count-1] at normalised surface
  // coordinates (x, y) (rho = hypot(x, y); points outside the unit disk get
  // the polynomial continuation). Asserts out.size() >= count.
  void Evaluate(double x, double y, std::span<double> out) const;

  // sum_j coefficients[j] Z_j(x, y) over j < min(count, coefficients.size()).
  [[nodiscard]] double Sum(std::span<const double> coefficients, double x,
                           double y) const;

 private:
  int count_ = 0;
  int max_order_ = 0;
  std::vector<ZernikeMode> modes_;
};

// A coefficient set sum_j c_j Z_j expanded once into Cartesian monomials
// sum_{p,q} a_pq x^p y^q (explicit factorial sum for R_n^m, exact in
// rational arithmetic up to rounding), for fast evaluation on pixel grids: a
// row of constant y reduces to a one-variable polynomial in x evaluated by
// Horner's rule. The monomial coefficients grow like 2^n, so the expansion
// is limited to radial order <= kMaxOrder, where the rounding error stays
// below 1e-12 of the coefficient norm on the unit disk (checked in
// tests/surface/zernike_test.cpp against the recurrence).
class ZernikePolynomial {
 public:
  // Highest radial order accepted.
  static constexpr int kMaxOrder = 12;

  // Expands sum_j coefficients[j] Z_j. Asserts every nonzero coefficient has
  // a radial order <= kMaxOrder. An empty or all-zero set gives 0.
  explicit ZernikePolynomial(std::span<const double> coefficients);

  // Degree of the polynomial (highest radial order with a nonzero term; 0
  // when empty).
  [[nodiscard]] int degree() const { return degree_; }

  // Value at normalised surface coordinates (x, y).
  [[nodiscard]] double operator()(double x, double y) const;

  // Coefficients b_0..b_degree of the polynomial in x along the row y:
  // p(x, y) = sum_k b_k x^k. `out` is resized to degree()+1.
  void RowCoefficients(double y, std::vector<double>* out) const;

  // Evaluates a row polynomial (from RowCoefficients) at x by Horner's rule.
  static double EvaluateRow(std::span<const double> row, double x) {
    double v = 0.0;
    for (std::size_t k = row.size(); k-- > 0;) v = v * x + row[k];
    return v;
  }

 private:
  int degree_ = 0;
  // a_[p * (degree_ + 1) + q] multiplies x^p y^q.
  std::vector<double> a_;
};

}  // namespace figura
