#include "apps/created_folder.hpp"

#include "engine/error.hpp"

namespace unfurl::app {
namespace {

// The folders create_directories(path) would make, deepest first.
std::vector<std::filesystem::path> missing_folders(std::filesystem::path path) {
  std::vector<std::filesystem::path> out;
  path = path.lexically_normal();
  if (!path.has_filename()) path = path.parent_path();  // "out/" names the folder "out"
  std::error_code ec;
  while (!path.empty() && !std::filesystem::exists(path, ec)) {
    out.push_back(path);
    path = path.parent_path();
  }
  return out;
}

}  // namespace

CreatedFolder::CreatedFolder(const std::filesystem::path& folder, const std::string& option)
    : made_(missing_folders(folder)) {
  std::error_code ec;
  std::filesystem::create_directories(folder, ec);
  if (ec || !std::filesystem::is_directory(folder))
    throw OutputError(option + " " + folder.string() + ": cannot create the folder" +
                      (ec ? ": " + ec.message() : ""));
}

CreatedFolder::~CreatedFolder() {
  std::error_code ec;
  for (const auto& f : made_) std::filesystem::remove(f, ec);  // only when empty
}

}  // namespace unfurl::app
