#include "fit/synth.hpp"

#include <cmath>
#include <cstdio>
#include <random>

#include <opencv2/imgproc.hpp>

#include "fit/json_file.hpp"
#include "fit/render.hpp"
#include "imaging/constants.hpp"
#include "imaging/fits.hpp"
#include "imaging/input_error.hpp"
#include "imaging/time.hpp"

namespace occulta::fit {
namespace fs = std::filesystem;
using nlohmann::json;

namespace {

// One reproducible random stream per (scenario seed, view, frame, purpose): the files
// of a view do not change when another view or a later frame is added.
std::mt19937_64 stream(const Scenario& s, int view, int frame, std::uint32_t purpose) {
  std::seed_seq seq{std::uint32_t(s.seed), std::uint32_t(s.seed >> 32), std::uint32_t(view), std::uint32_t(frame),
                    purpose};
  return std::mt19937_64(seq);
}
enum Purpose : std::uint32_t { kJitter = 1, kNoise = 2, kCosmics = 3 };

imaging::Observer observer_of(const ScenarioObserver& o) {
  return imaging::observer_from_degrees(o.lon_deg, o.lat_deg, o.dist_au * kAuKm);
}

// Sheath density at the time of a frame: (5 R☉ / h)² of the scenario's value at 5 R☉.
double peak_density_cm3(const ScenarioShell& shell, const ShellParams& at) {
  const double ratio = 5.0 / at.apex_height_rs;
  return shell.density_cm3 * ratio * ratio;
}

// The F corona (dust-scattered light): smooth and unpolarised, modelled as a power law
// in sky-plane height, B_F = f · 1e-8 · r^−2.5 B☉. That puts it level with the K corona
// near 3–5 R☉ and above it farther out, as the trade knows it (common practice; the
// coefficients are ours, from memory of its general behaviour, not a published fit).
void add_f_corona(cv::Mat& brightness, const imaging::ImageGeometry& geometry, double factor) {
  for (int y = 0; y < brightness.rows; ++y) {
    float* row = brightness.ptr<float>(y);
    for (int x = 0; x < brightness.cols; ++x) {
      const double r = std::max(1.0, std::hypot(x - geometry.sun_center_px.x(), y - geometry.sun_center_px.y()) *
                                         geometry.rs_per_px);
      row[x] += float(factor * 1e-8 * std::pow(r, -2.5));
    }
  }
}

// Detector: shot noise from the electrons collected (σ² = DN / gain, in DN²) and
// Gaussian read noise, both drawn as Gaussians — with thousands of electrons per pixel
// Poisson is Gaussian to well under a per cent (common practice).
void expose(cv::Mat& image_dn, const Scenario& s, std::mt19937_64& rng) {
  std::normal_distribution<float> unit(0.0f, 1.0f);
  const double gain = s.detector.electrons_per_dn, read = s.detector.read_noise_dn;
  for (int y = 0; y < image_dn.rows; ++y) {
    float* row = image_dn.ptr<float>(y);
    for (int x = 0; x < image_dn.cols; ++x) {
      const double dn = row[x];
      const double shot2 = gain > 0.0 ? std::max(dn, 0.0) / gain : 0.0;
      row[x] = float(dn + std::sqrt(shot2 + read * read) * unit(rng));
    }
  }
}

// Cosmic-ray hits: short straight tracks of 1–4 pixels, each a few thousand DN above
// the scene (common practice for CCD frames).
void add_cosmic_rays(cv::Mat& image_dn, int count, std::mt19937_64& rng) {
  std::uniform_int_distribution<int> px(0, image_dn.cols - 1), py(0, image_dn.rows - 1), len(1, 4), dir(0, 7);
  std::uniform_real_distribution<float> amp(2000.0f, 12000.0f);
  static const int dx[8] = {1, 1, 0, -1, -1, -1, 0, 1}, dy[8] = {0, 1, 1, 1, 0, -1, -1, -1};
  for (int k = 0; k < count; ++k) {
    int x = px(rng), y = py(rng);
    const int n = len(rng), d = dir(rng);
    const float a = amp(rng);
    for (int j = 0; j < n && x >= 0 && y >= 0 && x < image_dn.cols && y < image_dn.rows; ++j, x += dx[d], y += dy[d])
      image_dn.at<float>(y, x) += a;
  }
}

// A point source at its place of the moment (fraction f of the way from `from` to `to`,
// straight on the sky), its light shared among the four nearest pixels (bilinear); the
// point-spread function applied after spreads it as any point's. Sky place → pixel:
// θ = atan(h R☉ / D) from Sun centre at PA, θx = −θ sin PA (west positive), θy = θ cos PA
// (Thompson 2006 §2.2, with PA from north through east as imaging/geometry.hpp has it).
void add_point(cv::Mat& brightness, const imaging::ImageGeometry& geometry, const PointSource& p, double f) {
  const auto sky = [](double pa_deg, double h_rs) {
    return Eigen::Vector2d(-h_rs * std::sin(pa_deg * kRadPerDeg), h_rs * std::cos(pa_deg * kRadPerDeg));
  };
  const Eigen::Vector2d at_rs = (1.0 - f) * sky(p.from_pa_deg, p.from_height_rs) + f * sky(p.to_pa_deg, p.to_height_rs);
  const double h_rs = at_rs.norm();
  if (h_rs <= 0.0) return;
  const double theta = std::atan(h_rs * kSolarRadiusKm / geometry.observer.dist_km);
  const Eigen::Vector2d px = imaging::pixel_from_hpc(geometry, theta / h_rs * at_rs);
  if (!px.allFinite()) return;
  const int x0 = int(std::floor(px.x())), y0 = int(std::floor(px.y()));
  const double fx = px.x() - x0, fy = px.y() - y0;
  for (int dy = 0; dy <= 1; ++dy)
    for (int dx = 0; dx <= 1; ++dx) {
      const int x = x0 + dx, y = y0 + dy;
      if (x < 0 || y < 0 || x >= brightness.cols || y >= brightness.rows) continue;
      brightness.at<float>(y, x) += float(p.brightness_bsun * (dx ? fx : 1.0 - fx) * (dy ? fy : 1.0 - fy));
    }
}

BackgroundCorona background_model(const std::string& name) {
  if (name == "saito") return BackgroundCorona::saito;
  if (name == "baumbach-allen") return BackgroundCorona::baumbach_allen;
  return BackgroundCorona::none;
}

}  // namespace

imaging::GeometrySpec frame_geometry(const Scenario& s, int view, int frame) {
  const ScenarioObserver& o = s.observers.at(view);
  imaging::GeometrySpec spec;
  spec.width = spec.height = s.size_px;
  spec.observer = observer_of(o);
  // ±half_width R☉ at the Sun's distance across the frame's half width.
  const double half_angle = std::atan(s.half_width_rs * kSolarRadiusKm / spec.observer.dist_km);
  spec.arcsec_per_px = half_angle * kArcsecPerRad / (0.5 * s.size_px);
  spec.roll_deg = o.roll_deg;
  const double centre = 0.5 * (s.size_px - 1);
  spec.sun_center_px = {centre, centre};
  if (s.jitter_px > 0.0) {
    auto rng = stream(s, view, frame, kJitter);
    std::normal_distribution<double> jitter(0.0, s.jitter_px);
    spec.sun_center_px += Eigen::Vector2d(jitter(rng), jitter(rng));
  }
  return spec;
}

SkyTruth sky_truth(const ShellParams& shell, const imaging::Observer& observer, double visible_from_rs) {
  const ShellMesh mesh = make_mesh(shell, MeshResolution{24, 96, 48});
  const SkyOutline outline = sky_outline(mesh, shell, observer, 1.0);
  SkyTruth t;
  t.apex_pa_deg = outline.apex_pa_deg;
  t.pa_from_deg = outline.pa_from_deg;
  t.pa_to_deg = outline.pa_to_deg;
  const int bins = int(outline.max_height_rs.size());
  const int apex_bin = std::min(bins - 1, int(t.apex_pa_deg / outline.bin_deg));
  for (int i = 0; i < bins; ++i) {
    const double h = outline.max_height_rs[i];
    if (std::isnan(h)) continue;
    t.leading_edge_rs = std::max(t.leading_edge_rs, h);
    const int d = std::min((i - apex_bin + bins) % bins, (apex_bin - i + bins) % bins);
    if (d <= 1) t.leading_edge_at_apex_pa_rs = std::max(t.leading_edge_at_apex_pa_rs, h);
  }
  // Visible span: walk out from the apex bin both ways while bins show the shell above
  // the occulter (a gap of up to 2 bins is bridged: the mesh is sampled, not continuous).
  const auto visible = [&](int i) {
    const double h = outline.max_height_rs[((i % bins) + bins) % bins];
    return !std::isnan(h) && h >= visible_from_rs;
  };
  t.visible_pa_from_deg = t.visible_pa_to_deg = NAN;
  int lo = apex_bin, hi = apex_bin, gap = 0;
  bool any = visible(apex_bin);
  for (int k = 1; k < bins && gap <= 2; ++k) gap = visible(apex_bin - k) ? (lo = apex_bin - k, any = true, 0) : gap + 1;
  gap = 0;
  for (int k = 1; k < bins && gap <= 2 && hi - lo < bins; ++k)
    gap = visible(apex_bin + k) ? (hi = apex_bin + k, any = true, 0) : gap + 1;
  if (any) {
    const double apex_bin_start = apex_bin * outline.bin_deg;
    t.visible_pa_from_deg = t.apex_pa_deg + (lo * outline.bin_deg - apex_bin_start) - (t.apex_pa_deg - apex_bin_start);
    t.visible_pa_to_deg = t.apex_pa_deg + ((hi + 1) * outline.bin_deg - apex_bin_start) - (t.apex_pa_deg - apex_bin_start);
  }
  return t;
}

SynthResult synthesize(const Scenario& s, const fs::path& out_dir, const SynthProgress& progress) {
  SynthResult result;
  check_synth_fits(s, out_dir);
  std::error_code ec;
  fs::create_directories(out_dir, ec);
  if (ec) throw imaging::InputError(out_dir.string(), "cannot be made as a folder (" + ec.message() + ")");
  clear_previous_synth(out_dir, s.id);

  const int views = int(s.observers.size());
  int total = 0;
  for (const auto& o : s.observers) total += o.frames;
  int done = 0;

  // Truth per frame (on the shared clock): the first CME's apex height, and what each
  // view sees of its projected shell. Views on their own clocks list their frame times
  // instead (observers[].frame_times); fit/truth.hpp re-projects from the shells.
  json truth_frames = json::array();
  if (s.shared_clock())
    for (int i = 0; i < s.frames; ++i) {
      const double t = s.frame_time(0, i);
      const ShellParams shell = s.shells[0].at(t);
      json per_view = json::object();
      for (int v = 0; v < views; ++v) {
        if (!s.shells[0].launched(t)) {  // not drawn yet: nothing to see
          per_view[s.observers[v].name] = {{"apex_pa_deg", nullptr}, {"pa_span_deg", nullptr},
                                           {"visible_pa_span_deg", nullptr}, {"sky_leading_edge_rs", 0.0},
                                           {"sky_leading_edge_at_apex_pa_rs", 0.0}};
          continue;
        }
        const SkyTruth st = sky_truth(shell, observer_of(s.observers[v]), s.occulter_inner_rs);
        per_view[s.observers[v].name] = {{"apex_pa_deg", st.apex_pa_deg},
                                         {"pa_span_deg", {st.pa_from_deg, st.pa_to_deg}},
                                         {"visible_pa_span_deg", std::isnan(st.visible_pa_from_deg)
                                                                     ? json(nullptr)
                                                                     : json({st.visible_pa_from_deg, st.visible_pa_to_deg})},
                                         {"sky_leading_edge_rs", st.leading_edge_rs},
                                         {"sky_leading_edge_at_apex_pa_rs", st.leading_edge_at_apex_pa_rs}};
      }
      truth_frames.push_back({{"index", i},
                              {"time", imaging::iso_from_utc_seconds(t, 3)},
                              {"apex_height_rs", shell.apex_height_rs},
                              {"apex_speed_km_s", s.shells[0].apex.speed_at(t)},
                              {"views", per_view}});
    }
  std::vector<std::vector<std::string>> frame_files(static_cast<size_t>(views));

  json event_views = json::array();
  for (int v = 0; v < views; ++v) {
    const ScenarioObserver& o = s.observers[v];
    const fs::path view_dir = out_dir / o.name;
    fs::create_directories(view_dir, ec);
    if (ec) throw imaging::InputError(view_dir.string(), "cannot be made as a folder (" + ec.message() + ")");

    // The background corona seen from this observer, tabulated once for all its frames
    // (out to 1.5 × the half width: the corners at √2, with room for jitter).
    RenderScene scene;
    scene.background = background_model(s.background.k_corona);
    scene.background_table = std::make_shared<const BackgroundTable>(
        tabulate_background(observer_of(o), scene, 1.0, 1.5 * s.half_width_rs));

    for (int i = 0; i < o.frames; ++i) {
      const double t = s.frame_time(v, i);
      const imaging::GeometrySpec spec = frame_geometry(s, v, i);
      imaging::Header header;
      imaging::write_geometry(header, spec);
      const imaging::ImageGeometry geometry = imaging::read_geometry(header, o.name);

      // Brightness (B☉) → DN: detector response × exposure.
      scene.sheaths.clear();
      for (const ScenarioShell& cme : s.shells) {
        if (!cme.launched(t)) continue;
        const ShellParams shell = cme.at(t);
        scene.sheaths.push_back(ShellSheath{shell, peak_density_cm3(cme, shell), cme.sheath_fraction});
      }
      cv::Mat dn;
      render_frame(geometry, scene).total_bsun.convertTo(dn, CV_32F);
      if (s.background.f_corona > 0.0) add_f_corona(dn, geometry, s.background.f_corona);
      for (const PointSource& p : s.point_sources)
        if (p.view == o.name) add_point(dn, geometry, p, o.frames > 1 ? double(i) / (o.frames - 1) : 0.0);
      // The telescope's point-spread function: a Gaussian of 0.7 px σ, so that the scene is
      // sampled as a real detector samples it — without it, structure sharper than a pixel
      // (Saito's cusp at the equator) aliases differently at each pointing (common practice).
      cv::GaussianBlur(dn, dn, cv::Size(0, 0), 0.7, 0.7, cv::BORDER_REPLICATE);
      dn *= s.detector.dn_per_s_per_bsun * s.exposure_s;

      auto noise_rng = stream(s, v, i, kNoise);
      expose(dn, s, noise_rng);
      auto cosmic_rng = stream(s, v, i, kCosmics);
      add_cosmic_rays(dn, s.cosmic_rays_per_frame, cosmic_rng);
      // Occulter and field stop: no data inside the inner radius or beyond the outer one.
      for (int y = 0; y < dn.rows; ++y)
        for (int x = 0; x < dn.cols; ++x) {
          const double r = std::hypot(x - spec.sun_center_px.x(), y - spec.sun_center_px.y()) * geometry.rs_per_px;
          if (r < s.occulter_inner_rs || r > s.occulter_outer_rs) dn.at<float>(y, x) = NAN;
        }
      for (const MissingBlock& m : s.missing_blocks)
        if (m.view == o.name && m.frame == i)
          dn(cv::Rect(m.x, m.y, m.width, m.height) & cv::Rect(0, 0, dn.cols, dn.rows)).setTo(NAN);

      header.set_text("DATE-OBS", imaging::iso_from_utc_seconds(t, 3), "start of exposure, UTC");
      header.set_real("EXPTIME", s.exposure_s, "exposure time, s");
      header.set_text("BUNIT", "DN", "detector counts");
      header.set_text("OBSRVTRY", o.name, "invented observer (synthetic)");
      header.set_text("TELESCOP", kSynthTelescope, "synthetic coronagraph frame");
      header.set_text("OBJECT", s.id, "scenario id");
      header.set_real("OCC_IN", s.occulter_inner_rs, "occulter radius, R_sun");
      header.set_real("OCC_OUT", s.occulter_outer_rs, "field-stop radius, R_sun");
      header.add_commentary("COMMENT", "Synthetic frame made by occulta synth: Thomson-scattered K corona,");
      header.add_commentary("COMMENT", "F corona and a graduated cylindrical shell sheath. Not an observation.");

      char name[96];
      std::snprintf(name, sizeof name, "%s_%03d.fits", o.name.c_str(), i);
      const fs::path path = view_dir / name;
      imaging::FitsWriteOptions options;
      options.pixels = s.detector.pixels == "int16" ? imaging::FitsWriteOptions::Pixels::ScaledInt16
                                                    : imaging::FitsWriteOptions::Pixels::Float32;
      options.rice = s.detector.compress;
      imaging::write_fits(path, dn, header, options);
      result.frames.push_back(path);
      frame_files[size_t(v)].push_back((fs::path(o.name) / name).generic_string());
      if (s.shared_clock()) truth_frames[i]["views"][o.name]["file"] = frame_files[size_t(v)].back();
      if (progress) progress(++done, total);
    }
    event_views.push_back({{"name", o.name},
                           {"files", {o.name + "/*.fits"}},
                           {"occulter_rs", {s.occulter_inner_rs, s.occulter_outer_rs}}});
  }

  // The window: from the earliest frame of any view to the latest.
  double first_s = s.frame_time(0, 0), last_s = first_s;
  for (int v = 0; v < views; ++v) {
    first_s = std::min(first_s, s.frame_time(v, 0));
    last_s = std::max(last_s, s.frame_time(v, s.observers[v].frames - 1));
  }
  const json event = {{"id", s.id},
                      {"views", event_views},
                      {"window", {{"start", imaging::iso_from_utc_seconds(first_s, 3)},
                                  {"end", imaging::iso_from_utc_seconds(last_s, 3)}}},
                      {"base_time", imaging::iso_from_utc_seconds(first_s, 3)}};

  json observers = json::array();
  for (int v = 0; v < views; ++v) {
    const ScenarioObserver& o = s.observers[v];
    json entry = {{"name", o.name}, {"lon_deg", o.lon_deg}, {"lat_deg", o.lat_deg}, {"dist_au", o.dist_au},
                  {"roll_deg", o.roll_deg}};
    if (!s.shared_clock()) {
      json times = json::array();
      for (int i = 0; i < o.frames; ++i) times.push_back(imaging::iso_from_utc_seconds(s.frame_time(v, i), 3));
      entry["frame_times"] = times;
      entry["frame_files"] = frame_files[size_t(v)];
    }
    observers.push_back(entry);
  }
  const auto shell_truth = [](const ScenarioShell& cme) {
    const ShellParams ref = cme.at(cme.apex.ref_time_s);
    return json{{"lon_deg", cme.lon_deg},
                {"lat_deg", cme.lat_deg},
                {"tilt_deg", cme.tilt_deg},
                {"half_angle_deg", cme.half_angle_deg},
                {"aspect_ratio", cme.aspect_ratio},
                {"ref_time", imaging::iso_from_utc_seconds(cme.apex.ref_time_s, 3)},
                {"apex_height_rs", cme.apex.height_rs},
                {"speed_km_s", cme.apex.speed_km_s},
                {"accel_m_s2", cme.apex.accel_m_s2},
                {"leg_height_rs", leg_height_from_apex_height(ref.apex_height_rs, ref.half_angle, ref.aspect_ratio)},
                {"face_on_width_deg", face_on_width(ref.half_angle, ref.aspect_ratio) * kDegPerRad},
                {"edge_on_width_deg", edge_on_width(ref.aspect_ratio) * kDegPerRad},
                {"density_cm3_at_5rs", cme.density_cm3},
                {"sheath_fraction", cme.sheath_fraction}};
  };
  json truth = {{"schema", "occulta.truth/1"},
                {"id", s.id},
                {"scenario", s.source.filename().string()},
                {"observers", observers},
                {"shell", shell_truth(s.shells[0])}};
  if (s.shells.size() > 1) {
    json all = json::array();
    for (const ScenarioShell& cme : s.shells) all.push_back(shell_truth(cme));
    truth["shells"] = all;
  }
  if (s.shared_clock()) truth["frames"] = truth_frames;
  result.truth_file = out_dir / (s.id + ".truth.json");
  write_json_file(result.truth_file, truth);
  result.event_file = out_dir / (s.id + ".event.json");
  write_json_file(result.event_file, event);  // the seal, last: the frames and truth are whole
  return result;
}

}  // namespace occulta::fit
