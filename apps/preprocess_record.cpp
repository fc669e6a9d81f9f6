#include "apps/preprocess_record.hpp"

#include "apps/args.hpp"

#include <string>

#include "engine/error.hpp"

namespace unfurl::app {

void add_preprocess_arrays(const PreprocessModel& m, std::vector<io::MapArray>& out) {
  const nlohmann::json attrs = {{"scale", scale_name(m.scale)},
                                {"metric", metric_name(m.metric)},
                                {"components", m.components},
                                {"variance_kept", m.variance_kept}};
  out.push_back({"/preprocess/centre", m.centre, {m.centre.size()}, attrs});
  out.push_back({"/preprocess/spread", m.spread, {m.spread.size()}, attrs});
  if (m.components > 0) {
    out.push_back({"/preprocess/pca_mean", m.pca_mean, {m.pca_mean.size()}, attrs});
    out.push_back({"/preprocess/axes", m.axes, {m.components, m.input_cols}, attrs});
    out.push_back({"/preprocess/variances", m.variances, {m.variances.size()}, attrs});
  }
}

std::optional<PreprocessModel> preprocess_from_arrays(const std::vector<io::MapArray>& arrays) {
  auto find = [&](const std::string& path) -> const io::MapArray* {
    for (const auto& a : arrays)
      if (a.path == path) return &a;
    return nullptr;
  };
  const io::MapArray* centre = find("/preprocess/centre");
  const io::MapArray* spread = find("/preprocess/spread");
  if (!centre || !spread) return std::nullopt;
  PreprocessModel m;
  const nlohmann::json& at = centre->attributes;
  const std::string scale = at.value("scale", "none");
  const std::string metric = at.value("metric", "euclidean");
  m.scale =
      from_name(scale, {Scale::none, Scale::standard, Scale::robust}, scale_name, Scale::none);
  m.metric = from_name(metric, {Metric::euclidean, Metric::cosine}, metric_name, Metric::euclidean);
  m.input_cols = centre->values.size();
  m.centre = centre->values;
  m.spread = spread->values;
  m.components = at.value("components", std::size_t{0});
  m.variance_kept = at.value("variance_kept", 1.0);
  if (m.spread.size() != m.input_cols)
    throw DataError("/preprocess/spread: " + std::to_string(m.spread.size()) + " values for " +
                    std::to_string(m.input_cols) + " columns");
  if (m.components > 0) {
    const io::MapArray* mean = find("/preprocess/pca_mean");
    const io::MapArray* axes = find("/preprocess/axes");
    const io::MapArray* var = find("/preprocess/variances");
    if (!mean || !axes || !var || mean->values.size() != m.input_cols ||
        axes->values.size() != m.components * m.input_cols)
      throw DataError("/preprocess: the projection's arrays are missing or of the wrong size");
    m.pca_mean = mean->values;
    m.axes = axes->values;
    m.variances = var->values;
  }
  return m;
}

void add_input_centres(const std::vector<double>& centres, std::vector<io::MapArray>& out) {
  if (centres.empty()) return;
  out.push_back({"/input/centres",
                 centres,
                 {centres.size()},
                 {{"meaning",
                   "per-column values subtracted from the input (in float64) before narrowing to "
                   "float32; later uses of the input subtract the same"}}});
}

std::optional<std::vector<double>> input_centres_from_arrays(
    const std::vector<io::MapArray>& arrays) {
  for (const auto& a : arrays)
    if (a.path == "/input/centres") return a.values;
  return std::nullopt;
}

}  // namespace unfurl::app
