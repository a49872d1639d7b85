#include "fringe/ring_fit.h"

#include <Eigen/Dense>
#include <algorithm>
#include <array>
#include <cassert>
#include <cmath>
#include <functional>
#include <limits>
#include <map>
#include <numbers>
#include <set>
#include <sstream>
#include <string>
#include <utility>
#include <vector>

#include "optics/sphere.h"

namespace figura {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
// Consistency constant of the MAD for a normal distribution (1/Phi^-1(3/4)).
constexpr double kMadToSigma = 1.482602218505602;

using Vec = Eigen::VectorXd;
using Mat = Eigen::MatrixXd;
using Params6 =
    std::array<double, 6>;  // a, b, c, d, f, g in normalised coordinates

int ParamCount(RingModel model) {
  switch (model) {
    case RingModel::kConic:
      return 6;
    case RingModel::kIsotropic:
      return 2;
    case RingModel::kNoOffset:
      return 1;
  }
  return 6;
}

// Expands the fitted parameters to the general conic a X^2 + 2 b XY + c Y^2
// + d X + f Y + g.
Params6 Expand(const Vec& p, RingModel model) {
  switch (model) {
    case RingModel::kConic:
      return {p(0), p(1), p(2), p(3), p(4), p(5)};
    case RingModel::kIsotropic:
      return {p(0), 0.0, p(0), 0.0, 0.0, p(1)};
    case RingModel::kNoOffset:
      return {p(0), 0.0, p(0), 0.0, 0.0, 0.0};
  }
  return {};
}

// Design row of one point at normalised (X, Y).
void DesignRow(RingModel model, double x, double y, double* row) {
  switch (model) {
    case RingModel::kConic:
      row[0] = x * x;
      row[1] = 2.0 * x * y;
      row[2] = y * y;
      row[3] = x;
      row[4] = y;
      row[5] = 1.0;
      return;
    case RingModel::kIsotropic:
      row[0] = x * x + y * y;
      row[1] = 1.0;
      return;
    case RingModel::kNoOffset:
      row[0] = x * x + y * y;
      return;
  }
}

double Evaluate(const Params6& q, double x, double y) {
  return q[0] * x * x + 2.0 * q[1] * x * y + q[2] * y * y + q[3] * x +
         q[4] * y + q[5];
}

// Centre of the conic (normalised); false when the quadratic part is singular.
bool ConicCentre(const Params6& q, double* xc, double* yc) {
  const double det = q[0] * q[2] - q[1] * q[1];
  const double scale = std::max(q[0] * q[0], q[2] * q[2]) + q[1] * q[1];
  if (!(std::abs(det) > 1e-12 * scale)) return false;
  // [a b; b c] [xc yc] = -[d/2 f/2]
  *xc = (-0.5 * q[3] * q[2] + 0.5 * q[4] * q[1]) / det;
  *yc = (-0.5 * q[4] * q[0] + 0.5 * q[3] * q[1]) / det;
  return true;
}

// Exact gap minus its paraxial part at height r (m): the higher-order sag
// terms of s(R_part, r) - s(R_ref, r) (R_ref infinite: a flat). Zero where
// the height exceeds a radius (the fit reports such data elsewhere).
double HigherOrderGap(double r_m, double part_radius_m,
                      double reference_radius_m) {
  auto higher = [r_m](double radius) {
    if (!std::isfinite(radius) || radius == 0.0) return 0.0;
    if (std::abs(r_m) >= std::abs(radius)) return kNaN;
    return SphereSag(radius, r_m) - r_m * r_m / (2.0 * radius);
  };
  const double h = higher(part_radius_m) - higher(reference_radius_m);
  return std::isfinite(h) ? h : 0.0;
}

double Median(std::vector<double> v) {
  assert(!v.empty());
  const std::size_t mid = v.size() / 2;
  std::nth_element(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(mid),
                   v.end());
  double m = v[mid];
  if (v.size() % 2 == 0) {
    m = 0.5 *
        (m + *std::max_element(v.begin(),
                               v.begin() + static_cast<std::ptrdiff_t>(mid)));
  }
  return m;
}

// Gradient of a scalar function of the fitted parameters (central differences).
Vec Gradient(const std::function<double(const Vec&)>& f, const Vec& p) {
  Vec g(p.size());
  for (Eigen::Index j = 0; j < p.size(); ++j) {
    const double h = 1e-6 * std::max(std::abs(p(j)),
                                     1e-3 * p.cwiseAbs().maxCoeff() + 1e-300);
    Vec hi = p;
    Vec lo = p;
    hi(j) += h;
    lo(j) -= h;
    g(j) = (f(hi) - f(lo)) / (2.0 * h);
  }
  return g;
}

double Propagate(const std::function<double(const Vec&)>& f, const Vec& p,
                 const Mat& cov) {
  const Vec g = Gradient(f, p);
  const double var = g.dot(cov * g);
  return var > 0.0 ? std::sqrt(var) : 0.0;
}

std::string Format(double value, int digits = 4) {
  std::ostringstream out;
  out.precision(digits);
  out << value;
  return out.str();
}

// Which reported number of `fit` is unusable (e.g. "radius is infinite"): a
// radius, uncertainty, part radius, deviation, order offset, aperture
// diameter (and in image mode centre and astigmatism) that is not finite,
// or a zero radius; sag, power and its uncertainty only when
// `sag_defined` (they are NaN by design when the aperture is wider than
// the sphere). Empty when every number is usable.
std::string UnusableNumber(const RingFitResult& fit, bool sag_defined) {
  if (fit.radius_m == 0.0) return "radius is zero";
  std::vector<std::pair<const char*, double>> numbers = {
      {"radius", fit.radius_m},
      {"radius uncertainty", fit.radius_u_m},
      {"expanded radius uncertainty", fit.radius_u95_m},
      {"part radius", fit.part_radius_m},
      {"part radius uncertainty", fit.part_radius_u_m},
      {"expanded part radius uncertainty", fit.part_radius_u95_m},
      {"radius deviation", fit.deviation_m},
      {"order offset", fit.order_offset},
      {"order offset uncertainty", fit.order_offset_u},
      {"aperture diameter", fit.aperture_diameter_m}};
  if (fit.model == RingModel::kConic) {
    numbers.insert(numbers.end(),
                   {{"fringe centre x", fit.centre_px.x},
                    {"fringe centre y", fit.centre_px.y},
                    {"fringe centre uncertainty", fit.centre_u_px},
                    {"astigmatism", fit.astigmatism_fringes},
                    {"astigmatism uncertainty", fit.astigmatism_u_fringes}});
  }
  if (sag_defined) {
    numbers.insert(numbers.end(), {{"sag", fit.sag_m},
                                   {"power", fit.power_fringes},
                                   {"power uncertainty", fit.power_u_fringes}});
  }
  for (const auto& [name, value] : numbers) {
    if (!std::isfinite(value)) {
      return std::string(name) +
             (std::isnan(value) ? " is NaN" : " is infinite");
    }
  }
  return {};
}

}  // namespace

std::string RingFitOptions::Check() const {
  const double lambda = wavelength.value.metres;
  if (!(std::isfinite(lambda) && lambda > 0.0))
    return "the wavelength must be positive";
  if (!(std::isfinite(wavelength.uncertainty.metres) &&
        wavelength.uncertainty.metres >= 0.0)) {
    return "the wavelength uncertainty must be zero or positive";
  }
  if (!(std::isfinite(pixel_pitch.metres) && pixel_pitch.metres > 0.0)) {
    return "--pixel-pitch must be positive";
  }
  if (pixel_pitch.metres < kMinPixelPitchM ||
      pixel_pitch.metres > kMaxPixelPitchM) {
    return "--pixel-pitch must lie between 1 nm and 1 m (the object-side "
           "size of one pixel)";
  }
  if (!(std::isfinite(pixel_pitch_u.metres) && pixel_pitch_u.metres >= 0.0)) {
    return "--pixel-pitch-u must be zero or positive";
  }
  if (pixel_pitch_u.metres > 0.5 * pixel_pitch.metres) {
    return "--pixel-pitch-u is more than half the pixel pitch";
  }
  if (std::string s = stack.Check(); !s.empty()) return s;
  if (reference_radius) {
    if (!std::isfinite(reference_radius->metres) ||
        reference_radius->metres == 0.0) {
      return "--reference-radius must be a finite, non-zero length (convex "
             "positive)";
    }
  }
  if (!(std::isfinite(reference_radius_u.metres) &&
        reference_radius_u.metres >= 0.0)) {
    return "the reference radius uncertainty must be zero or positive";
  }
  if (test_diameter &&
      !(std::isfinite(test_diameter->metres) && test_diameter->metres > 0.0)) {
    return "--test-diameter must be a positive length";
  }
  if (aperture_diameter && !(std::isfinite(aperture_diameter->metres) &&
                             aperture_diameter->metres > 0.0)) {
    return "--aperture-diameter must be positive";
  }
  if (!(std::isfinite(outlier_threshold) && outlier_threshold >= 2.0)) {
    return "the outlier threshold must be at least 2 (robust standard "
           "deviations)";
  }
  if (!(std::isfinite(coverage_factor) && coverage_factor > 0.0)) {
    return "the coverage factor must be positive";
  }
  if (max_iterations < 1 || max_iterations > 100)
    return "max_iterations must be 1..100";
  return {};
}

double MinimumOffset(const MediaStack& stack, View view) {
  return RuleFor(stack, view).minimum_offset;
}

double PartRadiusFromFringes(double plate_radius_m, double diameter_m,
                             double fringes, double wavelength_m,
                             double gap_index, Contact contact) {
  const double sign = contact == Contact::kCentre ? 1.0 : -1.0;
  const double gap_sag = sign * fringes * wavelength_m / (2.0 * gap_index);
  return PartRadiusFromSagDifference(plate_radius_m, diameter_m, gap_sag);
}

double LiquidIndexFromDiameters(double diameter_air_m,
                                double diameter_liquid_m) {
  if (!(diameter_air_m > 0.0 && diameter_liquid_m > 0.0)) {
    throw InputError(
        "ring diameters must be positive to compute a liquid index");
  }
  const double q = diameter_air_m / diameter_liquid_m;
  return q * q;
}

RingFitResult FitRings(const std::vector<RingFitPoint>& points,
                       const RingFitOptions& options,
                       cv::Point2d centre_guess_px, RingModel model) {
  if (std::string why = options.Check(); !why.empty()) throw InputError(why);
  RingFitResult out;
  out.model = model;
  out.coverage_factor = options.coverage_factor;
  out.residuals_px.assign(points.size(), kNaN);
  out.outlier.assign(points.size(), false);
  auto fail = [&out](const std::string& why) {
    out.status = Status::kError;
    out.messages.push_back(why);
    return out;
  };

  const double lambda = options.wavelength.value.metres;
  const double n_gap = options.stack.gap_index;
  const double k_fringe = 2.0 * n_gap / lambda;  // fringes per metre of gap
  const double pitch = options.pixel_pitch.metres;
  const double sign = options.contact == Contact::kCentre ? 1.0 : -1.0;
  const double d_offset = MinimumOffset(options.stack, options.view);
  // Internally the radius the part has when it matches the plate: the
  // plate's radius mirrored (sphere.h: a perfect match is R_plate = -R).
  const double r_ref = options.reference_radius
                           ? -options.reference_radius->metres
                           : std::numeric_limits<double>::infinity();
  out.contact_sign = sign;
  out.test_plate = options.reference_radius.has_value();
  out.reference_radius_m =
      options.reference_radius ? options.reference_radius->metres : 0.0;

  // Usable points.
  std::vector<std::size_t> idx;
  for (std::size_t i = 0; i < points.size(); ++i) {
    const RingFitPoint& p = points[i];
    if (std::isfinite(p.x_px) && std::isfinite(p.y_px) &&
        std::isfinite(p.order) && std::isfinite(p.sigma_px) &&
        p.sigma_px > 0.0) {
      idx.push_back(i);
    }
  }
  const int n_par = ParamCount(model);
  std::set<double> orders;
  for (std::size_t i : idx) orders.insert(points[i].order);
  if (static_cast<int>(idx.size()) < n_par) {
    return fail("too few fringe points for the ring model (" +
                std::to_string(idx.size()) + ", need at least " +
                std::to_string(n_par) + ")");
  }
  if (model != RingModel::kNoOffset && orders.size() < 2) {
    return fail(
        "all fringe points have the same order: at least two rings are needed");
  }

  // Normalised coordinates about the guessed centre.
  double scale = 0.0;
  for (std::size_t i : idx) {
    scale = std::max(scale, std::hypot(points[i].x_px - centre_guess_px.x,
                                       points[i].y_px - centre_guess_px.y));
  }
  if (!(scale > 0.0)) return fail("all fringe points sit at the centre");
  const std::size_t n = idx.size();
  std::vector<double> xs(n), ys(n), sig(n), target(n), sig_t(n), resid(n);
  for (std::size_t j = 0; j < n; ++j) {
    const RingFitPoint& p = points[idx[j]];
    xs[j] = (p.x_px - centre_guess_px.x) / scale;
    ys[j] = (p.y_px - centre_guess_px.y) / scale;
    sig[j] = options.point_sigmas_known ? p.sigma_px / scale : 1.0 / scale;
  }
  std::vector<bool> inlier(n, true);

  Vec par = Vec::Zero(n_par);
  Params6 q{};
  double xc = 0.0;
  double yc = 0.0;
  double part_radius = kNaN;
  bool have_fit = false;
  Mat a_mat;
  Vec w;
  int iterations = 0;
  // Converged when the inlier set stops changing and the exact-sag
  // correction (which depends on the fitted radius) has settled.
  const int max_loops = options.max_iterations + 40;
  double previous_radius = kNaN;
  for (int it = 0; it < max_loops; ++it) {
    ++iterations;
    // Targets with the exact higher-order gap terms of the current estimate,
    // and the order uncertainty of each point from its radial uncertainty.
    const double a_mean = have_fit ? 0.5 * (q[0] + q[2]) : 1.0;
    for (std::size_t j = 0; j < n; ++j) {
      const double u = xs[j] - xc;
      const double v = ys[j] - yc;
      const double rr = std::hypot(u, v);
      double h = 0.0;
      if (have_fit && std::isfinite(part_radius)) {
        h = HigherOrderGap(rr * scale * pitch, part_radius, r_ref);
      }
      target[j] = sign * points[idx[j]].order - k_fringe * h;
      double grad = 2.0 * std::abs(a_mean) * rr;
      if (have_fit && rr > 0.0) {
        // Radial derivative of the fitted conic at the point.
        const double gx = 2.0 * q[0] * xs[j] + 2.0 * q[1] * ys[j] + q[3];
        const double gy = 2.0 * q[1] * xs[j] + 2.0 * q[2] * ys[j] + q[4];
        grad = std::abs(gx * u / rr + gy * v / rr);
      }
      const double second = std::abs(a_mean) * sig[j] * sig[j];
      sig_t[j] =
          std::sqrt(grad * grad * sig[j] * sig[j] + 2.0 * second * second);
      if (!(sig_t[j] > 0.0)) sig_t[j] = 1e-300;
    }
    // Weighted least squares on the inliers.
    const auto n_in = static_cast<Eigen::Index>(
        std::count(inlier.begin(), inlier.end(), true));
    if (n_in < n_par)
      return fail("too many fringe points rejected as outliers");
    a_mat.resize(n_in, n_par);
    Vec b(n_in);
    w.resize(n_in);
    Eigen::Index r = 0;
    std::array<double, 6> row{};
    for (std::size_t j = 0; j < n; ++j) {
      if (!inlier[j]) continue;
      DesignRow(model, xs[j], ys[j], row.data());
      const double wt = 1.0 / sig_t[j];
      for (int c = 0; c < n_par; ++c)
        a_mat(r, c) = row[static_cast<std::size_t>(c)] * wt;
      b(r) = target[j] * wt;
      w(r) = wt;
      ++r;
    }
    Eigen::ColPivHouseholderQR<Mat> qr(a_mat);
    if (qr.rank() < n_par) {
      return fail(
          "the fringe points do not determine the ring model (too few sectors "
          "or rings)");
    }
    par = qr.solve(b);
    q = Expand(par, model);
    have_fit = true;
    if (model == RingModel::kConic) {
      if (!ConicCentre(q, &xc, &yc)) {
        return fail("the fitted fringes are not closed rings (singular conic)");
      }
    }
    const double a_now = 0.5 * (q[0] + q[2]);
    if (!(sign * a_now > 0.0)) {
      return fail(std::string("the fringe orders do not grow as the gap does "
                              "for contact at the ") +
                  ContactName(options.contact) + " (check --contact)");
    }
    const double gap_radius =
        n_gap * pitch * pitch * scale * scale / (lambda * a_now);
    part_radius = 1.0 / (1.0 / gap_radius + 1.0 / r_ref);

    // Residuals and robust rejection over all points.
    std::vector<double> z(n);
    std::vector<double> z_in;
    for (std::size_t j = 0; j < n; ++j) {
      resid[j] = target[j] - Evaluate(q, xs[j], ys[j]);
      z[j] = resid[j] / sig_t[j];
      if (inlier[j]) z_in.push_back(z[j]);
    }
    const double med = Median(z_in);
    std::vector<double> dev;
    dev.reserve(z_in.size());
    for (double v : z_in) dev.push_back(std::abs(v - med));
    const double robust = std::max(kMadToSigma * Median(dev), 1e-6);
    // Robust rejection needs enough points for a meaningful MAD.
    std::vector<bool> next(n, true);
    if (n >= 20) {
      for (std::size_t j = 0; j < n; ++j) {
        next[j] = std::abs(z[j] - med) <= options.outlier_threshold * robust;
      }
    }
    const bool same = next == inlier;
    // A radius out of double range has no exact-sag terms to settle (they
    // are left out above); the guard after the loop refuses it.
    const bool settled = !std::isfinite(part_radius) ||
                         std::abs(part_radius - previous_radius) <=
                             1e-13 * std::abs(part_radius);
    previous_radius = part_radius;
    if (same && settled && it >= 2) break;
    // After max_iterations the inlier set is frozen (a rejection that
    // cycles between two sets, e.g. points at the threshold, would
    // otherwise keep the radius and so the exact-sag terms moving), and
    // the loop only lets the exact-sag terms settle on that set.
    const bool frozen = it >= options.max_iterations;
    if (frozen && settled) {
      out.messages.push_back("outlier rejection did not settle in " +
                             std::to_string(options.max_iterations) +
                             " iterations");
      break;
    }
    if (!frozen && std::count(next.begin(), next.end(), true) >= n_par) {
      inlier = next;
    }
    if (it == max_loops - 1) {
      out.messages.push_back("the exact-sag iteration did not converge");
    }
  }

  // Final residuals on the final inlier set (the loop ended after a fit).
  const auto n_in =
      static_cast<Eigen::Index>(std::count(inlier.begin(), inlier.end(), true));
  const double dof = static_cast<double>(n_in - n_par);
  double chi2 = 0.0;
  for (std::size_t j = 0; j < n; ++j) {
    if (inlier[j]) chi2 += (resid[j] / sig_t[j]) * (resid[j] / sig_t[j]);
  }
  out.chi2_reduced = dof > 0 ? chi2 / dof : kNaN;

  // Covariance of the parameters.
  const Mat ata = a_mat.transpose() * a_mat;
  const Mat c0 = ata.ldlt().solve(Mat::Identity(n_par, n_par));
  Mat cov = c0;
  std::string method;
  if (dof > 0) {
    if (options.detected_points) {
      cov = c0 * out.chi2_reduced;
      method = "fit covariance from the residual scatter (reduced chi-square " +
               Format(out.chi2_reduced, 3) + " of the detection's sigmas)";
    } else if (options.point_sigmas_known) {
      if (out.chi2_reduced > 1.0) {
        cov = c0 * out.chi2_reduced;
        method = "fit covariance scaled by the reduced chi-square " +
                 Format(out.chi2_reduced, 3) + " (Birge ratio)";
      } else {
        method =
            "fit covariance from the point uncertainties (reduced chi-square " +
            Format(out.chi2_reduced, 3) + ")";
      }
    } else {
      cov = c0 * out.chi2_reduced;
      method = "fit covariance from the residual scatter";
    }
  }
  // Sector-clustered sandwich covariance: points of one sector share errors.
  std::map<int, Vec> score;
  {
    std::array<double, 6> row{};
    for (std::size_t j = 0; j < n; ++j) {
      if (!inlier[j]) continue;
      DesignRow(model, xs[j], ys[j], row.data());
      const double wt2 = resid[j] / (sig_t[j] * sig_t[j]);
      Vec s(n_par);
      for (int c = 0; c < n_par; ++c)
        s(c) = row[static_cast<std::size_t>(c)] * wt2;
      auto [iter, inserted] =
          score.try_emplace(points[idx[j]].sector, Vec::Zero(n_par));
      iter->second += s;
    }
  }
  const auto groups = static_cast<int>(score.size());
  out.sectors_used = groups;
  auto mean_curv = [model](const Vec& p) {
    const Params6 e = Expand(p, model);
    return 0.5 * (e[0] + e[2]);
  };
  if (dof > 0 && model == RingModel::kConic && groups >= 6) {
    Mat meat = Mat::Zero(n_par, n_par);
    for (const auto& [sector, s] : score) meat += s * s.transpose();
    const double g = groups;
    const double nn = static_cast<double>(n_in);
    const Mat cl =
        c0 * meat * c0 * (g / (g - 1.0)) * ((nn - 1.0) / (nn - n_par));
    const Vec grad = Gradient(mean_curv, par);
    if (grad.dot(cl * grad) > grad.dot(cov * grad)) {
      cov = cl;
      method = "sector-clustered sandwich covariance over " +
               std::to_string(groups) +
               " sectors (larger than the model covariance)";
    }
  }

  // Derived quantities.
  const double a_mean = mean_curv(par);
  const double gap_radius =
      n_gap * pitch * pitch * scale * scale / (lambda * a_mean);
  out.gap_radius_m = gap_radius;
  const double r_part = 1.0 / (1.0 / gap_radius + 1.0 / r_ref);
  out.radius_m = r_part;
  out.centre_px = {centre_guess_px.x + scale * xc,
                   centre_guess_px.y + scale * yc};
  const double value_c = Evaluate(q, xc, yc);
  out.centre_value = value_c;
  out.model_part_radius_m = part_radius;
  out.model_reference_radius_m = r_ref;
  out.fringes_per_metre = k_fringe;
  out.pixel_pitch_m = pitch;
  const double order_c = sign * value_c;
  out.centre_order_fraction =
      order_c - d_offset - std::floor(order_c - d_offset);
  out.centre_predicted = std::abs(out.centre_order_fraction - 0.5) < 0.25
                             ? FringeState::kBright
                             : FringeState::kDark;
  // e: k * gap = order + e; for contact at the centre the gap vanishes there.
  out.order_offset = -order_c - std::floor(-order_c + 0.5);
  for (int i = 0; i < 3; ++i)
    out.quad_px2[i] = q[static_cast<std::size_t>(i)] / (scale * scale);

  // Aperture.
  double r_max_px = 0.0;
  for (std::size_t j = 0; j < n; ++j) {
    if (inlier[j])
      r_max_px = std::max(r_max_px, std::hypot(xs[j] - xc, ys[j] - yc) * scale);
  }
  // The test diameter (ISO 10110: the region the tolerance applies to)
  // when given, else the evaluated aperture.
  out.aperture_diameter_m =
      options.test_diameter       ? options.test_diameter->metres
      : options.aperture_diameter ? options.aperture_diameter->metres
                                  : 2.0 * r_max_px * pitch;
  out.over_test_diameter = options.test_diameter.has_value();
  if (options.test_diameter &&
      options.test_diameter->metres > 2.0 * r_max_px * pitch * 1.05) {
    out.messages.push_back(
        "the test diameter (" + FormatLength(*options.test_diameter) +
        ") reaches beyond the outermost fringe used (" +
        FormatLength(Length::Metres(2.0 * r_max_px * pitch)) +
        " across): power and sag there are extrapolated");
  }
  const double half = 0.5 * out.aperture_diameter_m;
  const double rho_px = half / pitch;

  // Uncertainties.
  const bool has_u = dof > 0;
  out.has_uncertainty = has_u;
  double u_rel_fit =
      has_u ? Propagate(mean_curv, par, cov) / std::abs(a_mean) : 0.0;
  double u_rel_det = 0.0;
  if (has_u && options.detected_points) {
    const double period_px2 = scale * scale / std::abs(a_mean);
    const double fringes = r_max_px * r_max_px / period_px2;
    u_rel_det = std::hypot(
        kDetectionFewFringes / (fringes * fringes * fringes) +
            std::max(kDetectionShortPeriod / (period_px2 * period_px2),
                     options.detection_blur_bias_rel),
        kDetectionFloor);
    method += "; ring-detection systematic (Type B, simulation study)";
  }
  const double u_rel_fit_only = u_rel_fit;
  u_rel_fit = std::hypot(u_rel_fit, u_rel_det);
  const double u_rel_pitch = 2.0 * options.pixel_pitch_u.metres / pitch;
  const double u_rel_lambda = options.wavelength.uncertainty.metres / lambda;
  const double u_gap_rel =
      std::sqrt(u_rel_fit * u_rel_fit + u_rel_pitch * u_rel_pitch +
                u_rel_lambda * u_rel_lambda);
  const double dr_dgap = (r_part / gap_radius) * (r_part / gap_radius);
  const double dr_dref =
      std::isfinite(r_ref) ? (r_part / r_ref) * (r_part / r_ref) : 0.0;
  const double u_from_gap = dr_dgap * std::abs(gap_radius) * u_gap_rel;
  const double u_from_ref = dr_dref * options.reference_radius_u.metres;
  const double u_r = std::hypot(u_from_gap, u_from_ref);
  const double abs_r = std::abs(r_part);
  out.u_rel_fit = dr_dgap * std::abs(gap_radius) * u_rel_fit_only / abs_r;
  out.u_rel_detection = dr_dgap * std::abs(gap_radius) * u_rel_det / abs_r;
  out.u_rel_pitch = dr_dgap * std::abs(gap_radius) * u_rel_pitch / abs_r;
  out.u_rel_wavelength = dr_dgap * std::abs(gap_radius) * u_rel_lambda / abs_r;
  out.u_rel_reference = u_from_ref / abs_r;
  if (has_u) {
    out.radius_u_m = u_r;
    out.radius_u95_m = options.coverage_factor * u_r;
    std::ostringstream note;
    note << "GUM (JCGM 100:2008) first-order propagation: " << method
         << "; pixel pitch (R ~ pitch^2) and wavelength (R ~ 1/lambda) "
            "uncertainties";
    if (out.test_plate) note << "; reference radius uncertainty";
    note << "; U95 = k u with k = " << Format(options.coverage_factor, 3);
    out.uncertainty_note = note.str();
  } else {
    out.uncertainty_note = model == RingModel::kNoOffset
                               ? "no uncertainty: one ring gives R only by "
                                 "assuming perfect contact (e = 0), "
                                 "with no degrees of freedom left"
                               : "no uncertainty: two rings determine R "
                                 "exactly (difference method) and leave "
                                 "no degrees of freedom";
  }
  if (out.test_plate) {
    out.part_radius_m = r_part;
    out.part_radius_u_m = out.radius_u_m;
    out.part_radius_u95_m = out.radius_u95_m;
    out.deviation_m = r_part - r_ref;
  }

  // Order offset and centre uncertainties.
  if (has_u) {
    auto centre_order = [model, sign](const Vec& p) {
      const Params6 e = Expand(p, model);
      double x = 0.0;
      double y = 0.0;
      if (model == RingModel::kConic && !ConicCentre(e, &x, &y)) return kNaN;
      return -sign * Evaluate(e, x, y);
    };
    out.order_offset_u =
        model == RingModel::kNoOffset ? 0.0 : Propagate(centre_order, par, cov);
    if (model == RingModel::kConic) {
      auto cx = [](const Vec& p) {
        double x = 0.0;
        double y = 0.0;
        ConicCentre(Expand(p, RingModel::kConic), &x, &y);
        return x;
      };
      auto cy = [](const Vec& p) {
        double x = 0.0;
        double y = 0.0;
        ConicCentre(Expand(p, RingModel::kConic), &x, &y);
        return y;
      };
      const double ux = Propagate(cx, par, cov) * scale;
      const double uy = Propagate(cy, par, cov) * scale;
      out.centre_u_px = std::sqrt(0.5 * (ux * ux + uy * uy));
      if (options.detected_points) {
        const double period_px2 = scale * scale / std::abs(a_mean);
        const double fringes = r_max_px * r_max_px / period_px2;
        out.centre_u_px =
            std::hypot(out.centre_u_px, kDetectionCentrePx / fringes);
      }
    }
  }

  // Sag and power over the aperture from the exact sags; undefined (NaN)
  // where the aperture is wider than the sphere.
  const bool sag_defined = half < abs_r;
  if (sag_defined) {
    out.sag_m = SphereSag(r_part, half);
    const double ref_sag = std::isfinite(r_ref) && half < std::abs(r_ref)
                               ? SphereSag(r_ref, half)
                               : 0.0;
    // Signed as the gap's change from the centre to the edge (sphere.h
    // SphereGap, and map power): negative when it closes towards the edge.
    out.power_fringes = k_fringe * (out.sag_m - ref_sag);
    out.power_u_fringes = std::abs(out.power_fringes) * u_gap_rel;
  } else {
    out.sag_m = kNaN;
    out.power_fringes = kNaN;
    out.power_u_fringes = kNaN;
  }

  // Astigmatism: principal values of the quadratic part (orders per px^2).
  if (model == RingModel::kConic) {
    auto astig = [rho_px, scale](const Vec& p) {
      const Params6 e = Expand(p, RingModel::kConic);
      const double half_diff = 0.5 * (e[0] - e[2]);
      return 2.0 * std::hypot(half_diff, e[1]) * rho_px * rho_px /
             (scale * scale);
    };
    out.astigmatism_fringes = astig(par);
    out.astigmatism_u_fringes = has_u ? Propagate(astig, par, cov) : 0.0;
    // Eigenvector of the larger principal value, image coordinates (y down).
    const double theta_img = 0.5 * std::atan2(2.0 * q[1], q[0] - q[2]);
    double deg =
        -theta_img * 180.0 / std::numbers::pi;  // surface coordinates, y up
    deg = std::fmod(deg + 360.0, 180.0);
    out.astigmatism_axis_deg = deg;
  }

  // The one finiteness guard of the fit, for image and diameter mode alike
  // (a non-finite number never reaches a report). Valid but absurd inputs
  // end here: ring diameters of 1e260 mm overflow r^2, a plate radius of
  // 1e-320 m underflows the part radius to zero, a reference-radius
  // uncertainty of 1e308 m overflows U95.
  if (const std::string bad = UnusableNumber(out, sag_defined); !bad.empty()) {
    return fail(
        "the fit gives no finite radius of curvature (values out of "
        "range: the " +
        bad +
        "; check the pixel pitch or ring diameters, the wavelength "
        "and the reference radius)");
  }
  if (!sag_defined) {
    out.messages.push_back(
        "the aperture is wider than the fitted sphere (half-aperture " +
        FormatLength(Length::Metres(half)) + " > |R| = " +
        FormatLength(Length::Metres(abs_r)) + "): no sag or power over it");
  }

  // Residuals per input point, ring count, statistics.
  double sum_px = 0.0;
  double sum_fr = 0.0;
  std::set<long> dark_rings, bright_rings;
  for (std::size_t j = 0; j < n; ++j) {
    const double u = xs[j] - xc;
    const double v = ys[j] - yc;
    const double rr = std::hypot(u, v);
    const double gx = 2.0 * q[0] * xs[j] + 2.0 * q[1] * ys[j] + q[3];
    const double gy = 2.0 * q[1] * xs[j] + 2.0 * q[2] * ys[j] + q[4];
    const double grad =
        rr > 0.0 ? (gx * u + gy * v) / rr : 0.0;  // orders per normalised unit
    const double res_px = grad != 0.0 ? -resid[j] / grad * scale : kNaN;
    out.residuals_px[idx[j]] = res_px;
    out.outlier[idx[j]] = !inlier[j];
    if (!inlier[j]) {
      ++out.points_rejected;
      continue;
    }
    ++out.points_used;
    if (std::isfinite(res_px)) sum_px += res_px * res_px;
    sum_fr += resid[j] * resid[j];
    const double rel = points[idx[j]].order - d_offset;
    if (std::abs(rel - std::round(rel)) < 0.25) {
      dark_rings.insert(std::lround(rel));
    } else {
      bright_rings.insert(std::lround(std::floor(rel)));
    }
  }
  // Dark rings are what an optician counts; a set of bright rings only (a
  // diameter file read on the maxima) is counted by its bright rings.
  out.ring_count = static_cast<int>(dark_rings.empty() ? bright_rings.size()
                                                       : dark_rings.size());
  out.residual_rms_px =
      std::sqrt(sum_px / static_cast<double>(out.points_used));
  out.residual_rms_fringes =
      std::sqrt(sum_fr / static_cast<double>(out.points_used));

  out.status = Status::kOk;
  if (out.points_rejected > 0) {
    out.messages.push_back(
        std::to_string(out.points_rejected) + " of " +
        std::to_string(points.size()) +
        " fringe points rejected as outliers (dust, scratches or the edge)");
  }
  if (out.points_rejected > static_cast<int>(n) / 4) {
    out.status = Status::kWarning;
    out.messages.push_back(
        "more than a quarter of the fringe points were rejected");
  }
  if (!out.messages.empty() && out.status == Status::kOk) {
    // Rejections alone are routine; other messages are warnings.
    const bool only_reject =
        out.messages.size() == 1 && out.points_rejected > 0;
    if (!only_reject) out.status = Status::kWarning;
  }
  (void)iterations;
  return out;
}

double FittedRadiusPx(const RingFitResult& fit, double order,
                      double angle_rad) {
  const double c = std::cos(angle_rad);
  const double s = std::sin(angle_rad);
  const double quad = fit.quad_px2[0] * c * c + 2.0 * fit.quad_px2[1] * c * s +
                      fit.quad_px2[2] * s * s;
  const double paraxial = fit.contact_sign * order - fit.centre_value;
  double t2 = paraxial / quad;
  // The fit's targets carry the exact higher-order gap terms:
  //   sign m - k H(r) = centre_value + quad t^2;
  // a few fixed-point steps solve for t (H is a small correction).
  const bool exact = std::isfinite(fit.model_part_radius_m) &&
                     fit.fringes_per_metre > 0.0 && fit.pixel_pitch_m > 0.0;
  for (int i = 0; exact && i < 8 && t2 >= 0.0 && std::isfinite(t2); ++i) {
    const double h =
        HigherOrderGap(std::sqrt(t2) * fit.pixel_pitch_m,
                       fit.model_part_radius_m, fit.model_reference_radius_m);
    t2 = (paraxial - fit.fringes_per_metre * h) / quad;
  }
  return t2 >= 0.0 && std::isfinite(t2) ? std::sqrt(t2) : kNaN;
}

}  // namespace figura
