#include "io/atomic_output.hpp"

#include <fcntl.h>
#include <signal.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <exception>
#include <string>
#include <vector>

#include "engine/error.hpp"
#include "io/detail/temp_names.hpp"

namespace unfurl::io {
namespace {

namespace fs = std::filesystem;

std::string cause(int err) {
  return std::strerror(err);
}

fs::path folder_of(const fs::path& p) {
  const fs::path parent = p.parent_path();
  return parent.empty() ? fs::path(".") : parent;
}

const char* kind_of(mode_t mode) {
  if (S_ISDIR(mode)) return "a folder";
  if (S_ISFIFO(mode)) return "a FIFO";
  if (S_ISSOCK(mode)) return "a socket";
  if (S_ISCHR(mode)) return "a character device";
  if (S_ISBLK(mode)) return "a block device";
  return "not a regular file";
}

void fsync_folder(const fs::path& folder, const std::string& shown) {
  const int fd = ::open(folder.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  if (fd < 0) throw IoError(shown + ": cannot open its folder to flush: " + cause(errno));
  const int rc = ::fsync(fd);
  const int err = errno;
  ::close(fd);
  // Some filesystems cannot sync a folder; the renames stand either way.
  if (rc != 0 && err != EINVAL && err != ENOTSUP)
    throw IoError(shown + ": flushing its folder failed: " + cause(err));
}

std::string replace_all(std::string text, const std::string& from, const std::string& to) {
  if (from.empty()) return text;
  for (std::size_t at = text.find(from); at != std::string::npos;
       at = text.find(from, at + to.size()))
    text.replace(at, from.size(), to);
  return text;
}

// Rethrows `e` as the same kind of error with `temp` renamed to `shown`.
[[noreturn]] void rethrow_named(const Error& e, const std::string& temp, const std::string& shown) {
  e.rethrow_with(replace_all(e.what(), temp, shown));
  std::terminate();  // not reached: every rethrow_with throws (the compiler cannot see it)
}

// Holds back the asynchronous stop signals of the calling thread for its lifetime.
class HeldSignals {
 public:
  HeldSignals() {
    sigset_t set;
    sigemptyset(&set);
    for (int s : {SIGINT, SIGTERM, SIGHUP, SIGUSR1, SIGUSR2, SIGQUIT}) sigaddset(&set, s);
    ::pthread_sigmask(SIG_BLOCK, &set, &old_);
  }
  ~HeldSignals() { ::pthread_sigmask(SIG_SETMASK, &old_, nullptr); }
  HeldSignals(const HeldSignals&) = delete;
  HeldSignals& operator=(const HeldSignals&) = delete;

 private:
  sigset_t old_;
};

}  // namespace

OutputSet::OutputSet(StopToken stop) : stop_(stop) {}

OutputSet::~OutputSet() {
  remove_temporaries();
}

std::string OutputSet::name(std::size_t i) const {
  const Output& o = outputs_.at(i);
  return o.label.empty() ? o.path.string() : o.label + " " + o.path.string();
}

void OutputSet::add_input(const fs::path& path, const std::string& label) {
  struct stat st;
  if (path.empty() || ::stat(path.c_str(), &st) != 0) return;
  inputs_.push_back({path, label, {st.st_dev, st.st_ino, {}}});
}

std::size_t OutputSet::add(const fs::path& path, const std::string& label) {
  Output o;
  o.path = path;
  o.label = label;
  const std::string shown = label.empty() ? path.string() : label + " " + path.string();
  if (path.empty()) throw OutputError((label.empty() ? "output" : label) + ": the path is empty");

  // Follow symlinks by hand: a dangling link is written through to its target too.
  fs::path p = path;
  struct stat st;
  bool exists = false;
  for (int hops = 0;; ++hops) {
    if (::lstat(p.c_str(), &st) != 0) {
      if (errno != ENOENT) throw OutputError(shown + ": " + cause(errno));
      break;
    }
    if (!S_ISLNK(st.st_mode)) {
      exists = true;
      break;
    }
    if (hops == 40) throw OutputError(shown + ": " + cause(ELOOP));
    std::error_code ec;
    const fs::path to = fs::read_symlink(p, ec);
    if (ec) throw OutputError(shown + ": cannot read the symlink: " + ec.message());
    p = to.is_absolute() ? to : folder_of(p) / to;
  }
  o.target = p;
  const fs::path folder = folder_of(p);
  if (exists) {
    if (!S_ISREG(st.st_mode))
      throw OutputError(shown + ": exists and is " + kind_of(st.st_mode) +
                        ", not a regular file; name a file to write");
    o.exists = true;
    o.mode = st.st_mode & 07777;
    o.uid = st.st_uid;
    o.gid = st.st_gid;
    o.id = {st.st_dev, st.st_ino, {}};
  } else if (p.filename().empty() || p.filename() == "." || p.filename() == "..") {
    throw OutputError(shown + ": names a folder, not a file");
  }
  struct stat fst;
  if (::stat(folder.c_str(), &fst) != 0)
    throw OutputError(shown + ": folder " + folder.string() +
                      (errno == ENOENT ? " does not exist" : ": " + cause(errno)));
  if (!S_ISDIR(fst.st_mode)) throw OutputError(shown + ": " + folder.string() + " is not a folder");
  if (::access(folder.c_str(), W_OK | X_OK) != 0)
    throw OutputError(shown + ": folder " + folder.string() + " is not writable (" + cause(errno) +
                      ")");
  if (!exists) o.id = {fst.st_dev, fst.st_ino, p.filename().string()};

  for (const Input& in : inputs_)
    if (in.id == o.id)
      throw OutputError(shown + ": is the same file as the " + in.label + " " + in.path.string() +
                        "; an input is never overwritten, name another output");
  for (std::size_t j = 0; j < outputs_.size(); ++j)
    if (outputs_[j].id == o.id)
      throw OutputError(shown + ": is the same file as " + name(j) + "; name different outputs");

  const FileId folder_id{fst.st_dev, fst.st_ino, {}};
  bool cleaned = false;
  for (const FileId& f : cleaned_folders_) cleaned = cleaned || f == folder_id;
  if (!cleaned) {
    detail::remove_stale_temporaries(folder);
    cleaned_folders_.push_back(folder_id);
  }
  outputs_.push_back(std::move(o));
  return outputs_.size() - 1;
}

void OutputSet::create_temp(std::size_t i) {
  Output& o = outputs_[i];
  for (int attempt = 0;; ++attempt) {
    o.temp = detail::temp_name_for(o.target);
    // A replaced file's mode is applied below; a new file gets 0666 & ~umask as usual.
    const int fd = ::open(o.temp.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC | O_NOFOLLOW,
                          o.exists ? 0600 : 0666);
    if (fd < 0) {
      const int err = errno;
      o.temp.clear();
      if (err == EEXIST && attempt < 100) continue;
      throw OutputError(name(i) + ": cannot create a temporary file beside it: " + cause(err));
    }
    if (o.exists) {
      // Root may write another user's file: keep its owner (best effort) before the mode,
      // since a change of owner clears set-id bits.
      if (::geteuid() == 0 && ::fchown(fd, o.uid, o.gid) != 0) { /* keep ours */
      }
      ::fchmod(fd, o.mode);
    }
    ::close(fd);
    return;
  }
}

void OutputSet::write(std::size_t i, const std::function<void(const fs::path&)>& fill) {
  Output& o = outputs_.at(i);
  if (o.written) throw InternalError(name(i) + ": written twice");
  stop_.check(("writing " + name(i)).c_str());
  create_temp(i);
  const std::string temp = o.temp.string();
  try {
    fill(o.temp);
    const int fd = ::open(o.temp.c_str(), O_RDONLY | O_CLOEXEC | O_NOFOLLOW);
    if (fd < 0) throw IoError(temp + ": cannot open to flush: " + cause(errno));
    if (o.exists) ::fchmod(fd, o.mode);  // in case `fill` made a new file
    const int rc = ::fsync(fd);
    const int err = errno;
    ::close(fd);
    if (rc != 0) throw IoError(temp + ": flush to disk failed: " + cause(err));
  } catch (const Error& e) {
    std::error_code ec;
    fs::remove(o.temp, ec);
    o.temp.clear();
    rethrow_named(e, temp, name(i));
  } catch (...) {
    std::error_code ec;
    fs::remove(o.temp, ec);
    o.temp.clear();
    throw;
  }
  o.written = true;
}

void OutputSet::write_text(std::size_t i, std::string_view text) {
  write(i, [text](const fs::path& temp) {
    const int fd = ::open(temp.c_str(), O_WRONLY | O_TRUNC | O_CLOEXEC);
    if (fd < 0) throw IoError(temp.string() + ": cannot open: " + cause(errno));
    std::size_t done = 0;
    while (done < text.size()) {
      const ssize_t n = ::write(fd, text.data() + done, text.size() - done);
      if (n < 0 && errno == EINTR) continue;
      if (n <= 0) {
        const int err = n < 0 ? errno : EIO;
        ::close(fd);
        throw IoError(temp.string() + ": write failed: " + cause(err));
      }
      done += static_cast<std::size_t>(n);
    }
    if (::close(fd) != 0) throw IoError(temp.string() + ": write failed: " + cause(errno));
  });
}

void OutputSet::commit() {
  if (committed_) throw InternalError("output set committed twice");
  const HeldSignals held;
  stop_.check("before writing the outputs (nothing was changed)");
  // Hard links of the files about to be replaced, so that a failed rename can put every
  // earlier one back. Where links are impossible, the step goes on without them.
  for (Output& o : outputs_) {
    if (!o.written || !o.exists) continue;
    o.backup = detail::temp_name_for(o.target);
    if (::link(o.target.c_str(), o.backup.c_str()) != 0) o.backup.clear();
  }
  for (std::size_t i = 0; i < outputs_.size(); ++i) {
    Output& o = outputs_[i];
    if (!o.written) continue;
    if (::rename(o.temp.c_str(), o.target.c_str()) == 0) {
      o.temp.clear();
      continue;
    }
    const int err = errno;
    for (std::size_t j = 0; j < i; ++j) {
      Output& done = outputs_[j];
      if (!done.written) continue;
      if (!done.backup.empty() && ::rename(done.backup.c_str(), done.target.c_str()) == 0)
        done.backup.clear();
      else if (!done.exists)
        ::unlink(done.target.c_str());
    }
    throw IoError(name(i) + ": cannot move the finished file into place: " + cause(err));
  }
  committed_ = true;
  remove_temporaries();  // the backups
  std::vector<fs::path> folders;
  for (std::size_t i = 0; i < outputs_.size(); ++i) {
    if (!outputs_[i].written) continue;
    const fs::path folder = folder_of(outputs_[i].target);
    bool seen = false;
    for (const fs::path& f : folders) seen = seen || f == folder;
    if (!seen) {
      folders.push_back(folder);
      fsync_folder(folder, name(i));
    }
  }
}

void OutputSet::remove_temporaries() noexcept {
  for (Output& o : outputs_) {
    if (!o.temp.empty()) ::unlink(o.temp.c_str());
    if (!o.backup.empty()) ::unlink(o.backup.c_str());
    o.temp.clear();
    o.backup.clear();
  }
}

}  // namespace unfurl::io
