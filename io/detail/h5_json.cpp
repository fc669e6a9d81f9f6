#include "io/detail/h5_json.hpp"

#include <map>
#include <vector>

#include "engine/error.hpp"

namespace unfurl::io::detail {
namespace {

using nlohmann::json;

bool all_numbers(const json& a) {
  if (!a.is_array() || a.empty()) return false;
  for (const auto& v : a)
    if (!v.is_number()) return false;
  return true;
}

bool all_integers(const json& a) {
  for (const auto& v : a)
    if (!v.is_number_integer()) return false;
  return true;
}

// One value as one attribute; objects (and odd arrays) become their JSON text.
void write_value(H5Writer& out, const std::string& object, const std::string& name, const json& v) {
  if (v.is_null()) return;
  if (v.is_string()) {
    out.set_string_attribute(object, name, v.get<std::string>());
  } else if (v.is_boolean()) {
    out.set_int_attribute(object, name, v.get<bool>() ? 1 : 0);
  } else if (v.is_number_unsigned() && v.get<std::uint64_t>() > INT64_MAX) {
    out.set_double_attribute(object, name, v.get<double>());
  } else if (v.is_number_integer()) {
    out.set_int_attribute(object, name, v.get<std::int64_t>());
  } else if (v.is_number()) {
    out.set_double_attribute(object, name, v.get<double>());
  } else if (all_numbers(v) && all_integers(v)) {
    out.set_ints_attribute(object, name, v.get<std::vector<std::int64_t>>());
  } else if (all_numbers(v)) {
    out.set_doubles_attribute(object, name, v.get<std::vector<double>>());
  } else {
    out.set_string_attribute(object, name, v.dump());
  }
}

json read_value(const H5Reader& in, const std::string& object, const std::string& name) {
  const H5Kind kind = in.attribute_kind(object, name);
  const std::size_t n = in.attribute_size(object, name);
  if (kind == H5Kind::string) return in.string_attribute(object, name);
  if (kind == H5Kind::integer)
    return n == 1 ? json(in.int_attribute(object, name)) : json(in.ints_attribute(object, name));
  if (kind == H5Kind::floating)
    return n == 1 ? json(in.double_attribute(object, name))
                  : json(in.doubles_attribute(object, name));
  return nullptr;  // a type we do not interpret (compound, enum, ...) is skipped
}

}  // namespace

void write_json_attributes(H5Writer& out, const std::string& object, const json& attrs) {
  if (!attrs.is_object()) {
    if (attrs.is_null()) return;
    throw InternalError(out.path().string() + ": " + object + ": attributes must be an object");
  }
  for (const auto& [name, value] : attrs.items()) {
    if (value.is_object()) {
      out.set_string_attribute(object, name, value.dump());
      for (const auto& [member, v] : value.items()) {
        write_value(out, object, name + "." + member, v.is_object() ? json(v.dump()) : v);
      }
    } else {
      write_value(out, object, name, value);
    }
  }
}

json read_json_attributes(const H5Reader& in, const std::string& object) {
  std::map<std::string, json> plain;
  for (const auto& name : in.attribute_names(object)) {
    json v = read_value(in, object, name);
    if (!v.is_null()) plain[name] = std::move(v);
  }
  json out = json::object();
  for (auto& [name, v] : plain) {
    const auto dot = name.find('.');
    if (dot != std::string::npos) {
      const auto parent = plain.find(name.substr(0, dot));
      if (parent != plain.end() && parent->second.is_string()) {
        const json parsed = json::parse(parent->second.get<std::string>(), nullptr, false);
        if (parsed.is_object()) continue;  // folded into its parent below
      }
      out[name] = v;
      continue;
    }
    if (v.is_string() && plain.lower_bound(name + ".") != plain.end() &&
        plain.lower_bound(name + ".")->first.rfind(name + ".", 0) == 0) {
      json parsed = json::parse(v.get<std::string>(), nullptr, false);
      if (parsed.is_object()) {
        out[name] = std::move(parsed);
        continue;
      }
    }
    out[name] = v;
  }
  return out;
}

}  // namespace unfurl::io::detail
