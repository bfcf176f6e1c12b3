#include "lopside/atomic_file.hpp"

#include <fcntl.h>
#include <pthread.h>
#include <sys/stat.h>
#include <unistd.h>

#include <array>
#include <atomic>
#include <cerrno>
#include <csignal>
#include <cstring>
#include <iostream>
#include <mutex>
#include <optional>
#include <streambuf>
#include <string>
#include <vector>

#include "lopside/error.hpp"

namespace lopside {

namespace fs = std::filesystem;

namespace detail {

/// A write-only stream buffer over a file descriptor that keeps the errno of the first failed
/// write(2). std::ofstream says only that something failed; the user is owed the reason
/// ("No space left on device", "Broken pipe"). After a failure everything is discarded.
class FdBuffer : public std::streambuf {
 public:
  explicit FdBuffer(int fd) : fd_(fd), buf_(std::make_unique<std::array<char, kSize>>()) {
    setp(buf_->data(), buf_->data() + buf_->size());
  }
  int error() const { return error_; }

 protected:
  int_type overflow(int_type ch) override {
    if (!drain()) return traits_type::eof();
    if (!traits_type::eq_int_type(ch, traits_type::eof())) {
      *pptr() = traits_type::to_char_type(ch);
      pbump(1);
    }
    return traits_type::not_eof(ch);
  }
  int sync() override { return drain() ? 0 : -1; }

 private:
  static constexpr std::size_t kSize = 64 * 1024;

  bool drain() {
    const char* p = pbase();
    auto left = static_cast<std::size_t>(pptr() - pbase());
    while (left > 0 && error_ == 0) {
      const ssize_t n = ::write(fd_, p, left);
      if (n < 0) {
        if (errno == EINTR) continue;
        error_ = errno;
      } else if (n == 0) {
        error_ = EIO;  // write(2) of a non-zero count returning 0: no progress, treat as I/O error
      } else {
        p += n;
        left -= static_cast<std::size_t>(n);
      }
    }
    setp(buf_->data(), buf_->data() + buf_->size());
    return error_ == 0;
  }

  int fd_;
  int error_ = 0;
  std::unique_ptr<std::array<char, kSize>> buf_;
};

}  // namespace detail

namespace {

std::string system_reason(int err) {
  return std::strerror(err);
}

// ---- Temporary files removed on SIGINT, SIGTERM, SIGHUP -------------------------------------
// A signal handler may call only async-signal-safe functions (POSIX, signal-safety(7)): no
// malloc, no locks, no C++ library. So the live temporary paths sit in fixed char buffers,
// each marked live by a volatile sig_atomic_t flag that is set only after its path is complete,
// and the handler calls unlink(2), signal(2) and raise(3), which are on that list.

constexpr std::size_t kRegistrySlots = 16;      // a command has at most a handful of outputs
constexpr std::size_t kRegistryPathMax = 4096;  // PATH_MAX on Linux

char g_temp_paths[kRegistrySlots][kRegistryPathMax];
volatile std::sig_atomic_t g_temp_live[kRegistrySlots];
std::mutex g_registry_mutex;  // between threads only; the handler never takes it

int registry_add(const std::string& path) {
  if (path.size() >= kRegistryPathMax) return -1;
  const std::lock_guard<std::mutex> lock(g_registry_mutex);
  for (std::size_t i = 0; i < kRegistrySlots; ++i) {
    if (g_temp_live[i] != 0) continue;
    std::memcpy(g_temp_paths[i], path.c_str(), path.size() + 1);
    // The path must be complete before the handler can see the slot as live.
    std::atomic_signal_fence(std::memory_order_seq_cst);
    g_temp_live[i] = 1;
    return static_cast<int>(i);
  }
  return -1;
}

// Called only after the temporary file is gone (renamed or unlinked): a signal in between
// makes the handler unlink a name that no longer exists, which is harmless.
void registry_remove(int slot) {
  if (slot < 0) return;
  const std::lock_guard<std::mutex> lock(g_registry_mutex);
  g_temp_live[slot] = 0;
}

extern "C" void remove_temps_and_reraise(int sig) {
  for (std::size_t i = 0; i < kRegistrySlots; ++i) {
    if (g_temp_live[i] != 0) ::unlink(g_temp_paths[i]);
  }
  // The default action, re-raised, ends the process as the signal would have, so the parent
  // sees "killed by SIGTERM" (exit status 128 + n in a shell), not an ordinary exit. The
  // signal is blocked while this handler runs and is delivered as soon as it returns.
  ::signal(sig, SIG_DFL);
  ::raise(sig);
}

constexpr std::array<int, 3> kCleanupSignals{SIGINT, SIGTERM, SIGHUP};

void install_cleanup_handlers() {
  static std::once_flag once;
  std::call_once(once, [] {
    for (const int sig : kCleanupSignals) {
      struct sigaction old {};
      if (::sigaction(sig, nullptr, &old) != 0) continue;
      // An ignored signal stays ignored (nohup, a background job's SIGINT), and a handler
      // that an embedding program installed is not taken over.
      if ((old.sa_flags & SA_SIGINFO) != 0 || old.sa_handler != SIG_DFL) continue;
      struct sigaction sa {};
      sa.sa_handler = remove_temps_and_reraise;
      sigemptyset(&sa.sa_mask);
      for (const int other : kCleanupSignals) sigaddset(&sa.sa_mask, other);
      ::sigaction(sig, &sa, nullptr);
    }
  });
}

/// Blocks the cleanup signals for its lifetime, so that a temporary file never exists
/// without being registered: between mkstemp(3) and registry_add a signal would leave it.
class CleanupSignalsBlocked {
 public:
  CleanupSignalsBlocked() {
    sigset_t set;
    sigemptyset(&set);
    for (const int sig : kCleanupSignals) sigaddset(&set, sig);
    ::pthread_sigmask(SIG_BLOCK, &set, &old_);
  }
  ~CleanupSignalsBlocked() { ::pthread_sigmask(SIG_SETMASK, &old_, nullptr); }
  CleanupSignalsBlocked(const CleanupSignalsBlocked&) = delete;
  CleanupSignalsBlocked& operator=(const CleanupSignalsBlocked&) = delete;

 private:
  sigset_t old_{};
};

// ---- Resolving what an output path names ----------------------------------------------------

// Names of already open descriptors: /dev/stdout etc. are symlinks into /proc/self/fd on
// Linux, and opening /proc/self/fd/N opens the file anew (offset 0, proc(5)), which would
// write over the start of a file that standard output appends to. They are taken for the
// descriptor itself, as a shell's redirection would.
std::optional<int> descriptor_alias(const fs::path& absolute) {
  const std::string s = absolute.lexically_normal().string();
  if (s == "/dev/stdin") return 0;
  if (s == "/dev/stdout") return 1;
  if (s == "/dev/stderr") return 2;
  const std::array<std::string, 3> prefixes{"/dev/fd/", "/proc/self/fd/",
                                            "/proc/" + std::to_string(::getpid()) + "/fd/"};
  for (const std::string& prefix : prefixes) {
    if (s.size() <= prefix.size() || s.compare(0, prefix.size(), prefix) != 0) continue;
    const std::string digits = s.substr(prefix.size());
    if (digits.size() > 9 || digits.find_first_not_of("0123456789") != std::string::npos) {
      return std::nullopt;
    }
    return std::stoi(digits);
  }
  return std::nullopt;
}

// Linux's limit on symlinks followed in one lookup (MAXSYMLINKS, path_resolution(7)).
constexpr int kMaxSymlinks = 40;

void sync_directory(const fs::path& dir) {
  // fsync(2) on the directory makes the rename itself durable (ext4 and XFS document that a
  // rename reaches the disk with the directory's metadata). Best effort: some file systems
  // refuse it, and the data is already safe under one name or the other.
  const int dfd = ::open(dir.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  if (dfd < 0) return;
  ::fsync(dfd);
  ::close(dfd);
}

}  // namespace

OutputTarget resolve_output(const fs::path& given) {
  OutputTarget t;
  t.path = given;
  if (given.string() == "-") {
    t.kind = OutputTarget::Kind::standard_output;
    return t;
  }
  fs::path p = given;
  for (int links = 0;; ++links) {
    if (links > kMaxSymlinks) {
      throw OutputError(given.string(), "too many levels of symbolic links");
    }
    const fs::path absolute = p.is_absolute() ? p : fs::current_path() / p;
    if (const std::optional<int> fd = descriptor_alias(absolute)) {
      t.kind = *fd == STDOUT_FILENO ? OutputTarget::Kind::standard_output
                                    : OutputTarget::Kind::descriptor;
      t.fd = *fd;
      return t;
    }
    struct stat st {};
    if (::lstat(absolute.c_str(), &st) != 0) {
      if (errno == ENOENT) {  // a new file (a missing directory shows when it is created)
        t.kind = OutputTarget::Kind::replace;
        t.path = absolute;
        return t;
      }
      throw OutputError(given.string(),
                        "cannot examine " + absolute.string() + ": " + system_reason(errno));
    }
    if (S_ISLNK(st.st_mode)) {
      std::error_code ec;
      const fs::path link = fs::read_symlink(absolute, ec);
      if (ec) {
        throw OutputError(given.string(),
                          "cannot read the symlink " + absolute.string() + ": " + ec.message());
      }
      p = link.is_absolute() ? link : absolute.parent_path() / link;
      continue;
    }
    if (S_ISDIR(st.st_mode)) {
      throw OutputError(given.string(), "is a directory; expected a file to write");
    }
    t.kind = S_ISREG(st.st_mode) ? OutputTarget::Kind::replace : OutputTarget::Kind::direct;
    t.path = absolute;
    t.exists = true;
    return t;
  }
}

AtomicOutput::AtomicOutput(const fs::path& target) : target_(target) {
  const OutputTarget t = resolve_output(target);
  target_kind_ = t.kind;
  final_ = t.path;
  const std::string shown = target.string();
  switch (t.kind) {
    case OutputTarget::Kind::standard_output:
      temp_ = target;
      return;
    case OutputTarget::Kind::descriptor: {
      // A duplicate shares the descriptor's offset and O_APPEND, as `>&N` in a shell does.
      fd_ = ::fcntl(t.fd, F_DUPFD_CLOEXEC, 3);
      if (fd_ < 0) {
        throw OutputError(
            shown, "descriptor " + std::to_string(t.fd) + " is not open: " + system_reason(errno));
      }
      if ((::fcntl(fd_, F_GETFL) & O_ACCMODE) == O_RDONLY) {
        ::close(fd_);
        fd_ = -1;
        throw OutputError(shown,
                          "descriptor " + std::to_string(t.fd) + " is open for reading only");
      }
      temp_ = target;
      break;
    }
    case OutputTarget::Kind::direct: {
      // No O_CREAT, no O_TRUNC: the node exists and is written in place; O_NOFOLLOW because the
      // path's last component was just found not to be a symlink and must not become one.
      fd_ = ::open(final_.c_str(), O_WRONLY | O_NOCTTY | O_CLOEXEC | O_NOFOLLOW);
      if (fd_ < 0) {
        throw OutputError(
            shown, "cannot open " + final_.string() + " for writing: " + system_reason(errno));
      }
      struct stat st {};
      if (::fstat(fd_, &st) != 0 || S_ISREG(st.st_mode) || S_ISDIR(st.st_mode)) {
        ::close(fd_);
        fd_ = -1;
        throw OutputError(shown, "changed while being opened; not written");
      }
      temp_ = final_;
      break;
    }
    case OutputTarget::Kind::replace: {
      struct stat old {};
      const bool have_old = t.exists && ::stat(final_.c_str(), &old) == 0;
      // A file the user made read-only is not replaced behind their back (a shell's `>` would
      // fail on it too). AT_EACCESS: checked as the effective user; root passes, as for open.
      if (have_old && ::faccessat(AT_FDCWD, final_.c_str(), W_OK, AT_EACCESS) != 0) {
        throw OutputError(shown, "cannot write " + final_.string() + ": " + system_reason(errno));
      }
      // mkstemp gives a name no one else holds, in the target's own directory so that the
      // final rename(2) stays on one file system and is atomic (POSIX rename semantics).
      std::string pattern = final_.string() + ".tmp-XXXXXX";
      std::vector<char> name(pattern.begin(), pattern.end());
      name.push_back('\0');
      {
        install_cleanup_handlers();
        const CleanupSignalsBlocked blocked;
        fd_ = ::mkstemp(name.data());
        if (fd_ < 0) {
          const int err = errno;
          throw OutputError(
              shown,
              "cannot create output file" +
                  (final_ == fs::absolute(target) ? std::string() : " beside " + final_.string()) +
                  ": " + system_reason(err));
        }
        ::fcntl(fd_, F_SETFD, FD_CLOEXEC);
        temp_ = fs::path(name.data());
        registry_slot_ = registry_add(temp_.string());
        if (registry_slot_ < 0) {
          ::close(fd_);
          fd_ = -1;
          ::unlink(temp_.c_str());
          throw OutputError(shown, "too many outputs open at once, or the path is too long");
        }
      }
      if (have_old) {
        // Keep what the user set on the file they had: owner and group first (as root; an
        // ordinary user may still set a group they belong to), then the mode, since chown(2)
        // clears set-user-ID bits. Failure leaves mkstemp's private 0600, never wider.
        const uid_t uid = ::geteuid() == 0 ? old.st_uid : static_cast<uid_t>(-1);
        [[maybe_unused]] const int chown_result = ::fchown(fd_, uid, old.st_gid);
        ::fchmod(fd_, old.st_mode & 07777);
      } else {
        // mkstemp creates the file 0600; a new output should get the mode any new file of the
        // user's would (0666 less the umask), as open(2) with O_CREAT gives.
        const mode_t mask = ::umask(0);
        ::umask(mask);
        ::fchmod(fd_, static_cast<mode_t>(0666 & ~mask));
      }
      break;
    }
  }
  buffer_ = std::make_unique<detail::FdBuffer>(fd_);
  file_stream_ = std::make_unique<std::ostream>(buffer_.get());
}

AtomicOutput::~AtomicOutput() {
  file_stream_.reset();
  buffer_.reset();  // unflushed text is dropped: an output that was not committed is not written
  if (fd_ >= 0) ::close(fd_);
  if (target_kind_ == OutputTarget::Kind::replace && !committed_ && !temp_.empty()) {
    ::unlink(temp_.c_str());
    registry_remove(registry_slot_);
  }
}

std::ostream& AtomicOutput::stream() {
  return is_stdout() ? std::cout : *file_stream_;
}

void AtomicOutput::commit() {
  if (committed_) return;
  if (is_stdout()) {
    flush_standard_output();
    committed_ = true;
    return;
  }
  const std::string shown = target_.string();
  const bool replacing = target_kind_ == OutputTarget::Kind::replace;
  const std::string untouched = replacing ? "; " + final_.string() + " left as it was" : "";
  file_stream_->flush();
  if (buffer_->error() != 0 || !*file_stream_) {
    const int err = buffer_->error();
    throw OutputError(
        shown, "write failed: " + (err != 0 ? system_reason(err) : std::string("stream error")) +
                   untouched);
  }
  // Data on the disk before the new name points at it: otherwise a crash soon after the rename
  // can leave an empty file under the old name (the ext4 delayed-allocation case). EINVAL and
  // EROFS mean the file cannot be synced at all, not that data was lost.
  if (replacing && ::fsync(fd_) != 0 && errno != EINVAL && errno != EROFS) {
    throw OutputError(shown, "cannot flush to disk: " + system_reason(errno) + untouched);
  }
  // close(2) can report a write error that an earlier write did not (NFS, quota; close(2)
  // NOTES). On Linux the descriptor is released even when it fails, so it is never retried.
  const int fd = fd_;
  fd_ = -1;
  if (::close(fd) != 0 && errno != EINTR) {
    throw OutputError(shown, "write failed on close: " + system_reason(errno) + untouched);
  }
  if (replacing) {
    if (::rename(temp_.c_str(), final_.c_str()) != 0) {
      throw OutputError(
          shown, "cannot replace " + final_.string() + ": " + system_reason(errno) + untouched);
    }
    registry_remove(registry_slot_);
    sync_directory(final_.parent_path());
  }
  committed_ = true;
}

// ---- Standard output -------------------------------------------------------------------------

namespace {
std::unique_ptr<detail::FdBuffer> g_stdout_buffer;
std::streambuf* g_saved_cout_buffer = nullptr;
}  // namespace

StandardOutput::StandardOutput() {
  g_stdout_buffer = std::make_unique<detail::FdBuffer>(STDOUT_FILENO);
  g_saved_cout_buffer = std::cout.rdbuf(g_stdout_buffer.get());
}

StandardOutput::~StandardOutput() {
  std::cout.flush();
  std::cout.rdbuf(g_saved_cout_buffer);
  g_stdout_buffer.reset();
}

void StandardOutput::check_open() {
  if (::fcntl(STDOUT_FILENO, F_GETFL) == -1) {
    throw OutputError("standard output", "cannot write: " + system_reason(errno));
  }
}

bool StandardOutput::failed() const {
  return !std::cout || (g_stdout_buffer && g_stdout_buffer->error() != 0);
}

std::string StandardOutput::failure_text() const {
  const int err = g_stdout_buffer ? g_stdout_buffer->error() : 0;
  return "standard output: write failed" + (err != 0 ? ": " + system_reason(err) : std::string());
}

void flush_standard_output() {
  std::cout.flush();
  if (!std::cout) {
    const int err = g_stdout_buffer ? g_stdout_buffer->error() : 0;
    throw OutputError("standard output",
                      "write failed" + (err != 0 ? ": " + system_reason(err) : std::string()));
  }
}

}  // namespace lopside
