#include "lopside/atomic_file.hpp"

#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <iostream>
#include <string>
#include <vector>

#include "lopside/error.hpp"

namespace lopside {

AtomicOutput::AtomicOutput(const std::filesystem::path& target) : target_(target) {
  if (target.string() == "-") {
    to_stdout_ = true;
    return;
  }
  // mkstemp gives a name no one else holds, in the target's own directory so that the final
  // rename(2) stays on one file system and is atomic (POSIX rename semantics).
  std::string pattern = target.string() + ".tmp-XXXXXX";
  std::vector<char> name(pattern.begin(), pattern.end());
  name.push_back('\0');
  const int fd = ::mkstemp(name.data());
  if (fd < 0) {
    throw InputError(target.string(),
                     std::string("cannot create output file: ") + std::strerror(errno));
  }
  // mkstemp creates the file 0600; an output should get the mode any new file of the user's
  // would (0666 less the umask), as open(2) with O_CREAT gives.
  const mode_t mask = ::umask(0);
  ::umask(mask);
  ::fchmod(fd, static_cast<mode_t>(0666 & ~mask));
  ::close(fd);
  temp_ = std::filesystem::path(name.data());
  file_ = std::make_unique<std::ofstream>(temp_, std::ios::binary | std::ios::trunc);
  if (!*file_) {
    std::filesystem::remove(temp_);
    throw InputError(target.string(), "cannot open output file for writing");
  }
}

AtomicOutput::~AtomicOutput() {
  if (!to_stdout_ && !committed_) {
    file_.reset();
    std::error_code ignored;
    std::filesystem::remove(temp_, ignored);
  }
}

std::ostream& AtomicOutput::stream() {
  return to_stdout_ ? std::cout : *file_;
}

void AtomicOutput::commit() {
  if (to_stdout_) {
    std::cout.flush();
    return;
  }
  if (file_) {
    file_->flush();
    const bool ok = static_cast<bool>(*file_);
    file_->close();
    if (!ok) throw InputError(target_.string(), "write failed (disk full?); target left untouched");
  }
  std::error_code ec;
  std::filesystem::rename(temp_, target_, ec);
  if (ec) throw InputError(target_.string(), "cannot replace output file: " + ec.message());
  committed_ = true;
}

}  // namespace lopside
