#include "io/detail/hdf5_attributes.hpp"

#include <cstdio>
#include <string>

namespace unfurl::io::detail {

namespace {

constexpr hssize_t kMaxShown = 16;             // values printed in full; common practice
constexpr std::size_t kMaxStringBytes = 4096;  // longer strings are summarised

std::string format_number(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.17g", v);
  return buf;
}

// "<text>", built by appending (GCC 12 warns falsely on "<" + std::string).
std::string angled(const std::string& text) {
  std::string out(1, '<');
  out += text;
  out += '>';
  return out;
}

std::string joined(const std::vector<std::string>& parts) {
  if (parts.size() == 1) return parts.front();
  std::string out = "[";
  for (std::size_t i = 0; i < parts.size(); ++i) out += (i ? ", " : "") + parts[i];
  return out + "]";
}

std::string string_value(hid_t attr, hid_t type, hid_t space, hssize_t n) {
  std::vector<std::string> parts;
  if (H5Tis_variable_str(type) > 0) {
    Hid mem(H5Tcopy(H5T_C_S1));
    if (!mem || H5Tset_size(mem.get(), H5T_VARIABLE) < 0 ||
        H5Tset_cset(mem.get(), H5Tget_cset(type)) < 0)
      return "<unreadable>";
    std::vector<char*> values(static_cast<std::size_t>(n), nullptr);
    if (H5Aread(attr, mem.get(), values.data()) < 0) return "<unreadable>";
    for (char* v : values) {
      std::string s = v ? v : "";
      if (s.size() > kMaxStringBytes) s = s.substr(0, kMaxStringBytes) + "...";
      parts.push_back(s);
    }
    H5Dvlen_reclaim(mem.get(), space, H5P_DEFAULT, values.data());
    return joined(parts);
  }
  const std::size_t size = H5Tget_size(type);
  if (size == 0 || size > kMaxStringBytes)
    return angled("string of " + std::to_string(size) + " bytes");
  std::vector<char> buffer(size * static_cast<std::size_t>(n) + 1, '\0');
  if (H5Aread(attr, type, buffer.data()) < 0) return "<unreadable>";
  for (hssize_t i = 0; i < n; ++i) {
    const char* start = buffer.data() + static_cast<std::size_t>(i) * size;
    std::size_t len = 0;
    while (len < size && start[len] != '\0') ++len;
    parts.emplace_back(start, len);
  }
  return joined(parts);
}

std::string attribute_value(hid_t attr) {
  Hid type(H5Aget_type(attr));
  Hid space(H5Aget_space(attr));
  if (!type || !space) return "<unreadable>";
  const hssize_t n = H5Sget_simple_extent_npoints(space.get());
  if (n < 0) return "<unreadable>";
  if (n == 0) return "<empty>";
  const std::string type_name = hdf5_type_name(type.get());
  if (n > kMaxShown) return angled(std::to_string(n) + " " + type_name + " values");
  if (H5Tget_class(type.get()) == H5T_STRING) return string_value(attr, type.get(), space.get(), n);
  if (!is_plain_numeric_type(type.get())) return angled(type_name);
  std::vector<double> values(static_cast<std::size_t>(n));
  if (H5Aread(attr, H5T_NATIVE_DOUBLE, values.data()) < 0) return "<unreadable>";
  std::vector<std::string> parts;
  const bool integer = H5Tget_class(type.get()) == H5T_INTEGER;
  for (double v : values)
    parts.push_back(integer && v >= -9.0e15 && v <= 9.0e15
                        ? std::to_string(static_cast<long long>(v))
                        : format_number(v));
  return joined(parts);
}

herr_t collect_attribute(hid_t object, const char* name, const H5A_info_t*, void* data) {
  auto* out = static_cast<std::vector<AttributeText>*>(data);
  Hid attr(H5Aopen(object, name, H5P_DEFAULT));
  out->push_back({name, attr ? attribute_value(attr.get()) : "<unreadable>"});
  return 0;
}

}  // namespace

std::vector<AttributeText> attribute_texts(hid_t object) {
  std::vector<AttributeText> out;
  hsize_t index = 0;
  H5Aiterate2(object, H5_INDEX_NAME, H5_ITER_INC, &index, collect_attribute, &out);
  // One attribute, one line: control characters of stored text become spaces.
  for (auto& a : out)
    for (std::string* s : {&a.name, &a.value})
      for (char& c : *s)
        if (static_cast<unsigned char>(c) < 0x20) c = ' ';
  return out;
}

}  // namespace unfurl::io::detail
