#pragma once
// A file descriptor closed when its owner goes, shared by the readers of src/io.
#include <unistd.h>

#include <utility>

namespace lopside::detail {

/// A descriptor closed at the end unless it is borrowed (standard input stays open).
class UniqueFd {
 public:
  UniqueFd() = default;
  UniqueFd(int fd, bool owned) : fd_(fd), owned_(owned) {}
  UniqueFd(UniqueFd&& o) noexcept : fd_(std::exchange(o.fd_, -1)), owned_(o.owned_) {}
  UniqueFd& operator=(UniqueFd&& o) noexcept {
    reset();
    fd_ = std::exchange(o.fd_, -1);
    owned_ = o.owned_;
    return *this;
  }
  UniqueFd(const UniqueFd&) = delete;
  UniqueFd& operator=(const UniqueFd&) = delete;
  ~UniqueFd() { reset(); }
  int get() const { return fd_; }
  int release() { return std::exchange(fd_, -1); }
  void reset() {
    if (fd_ >= 0 && owned_) ::close(fd_);
    fd_ = -1;
  }

 private:
  int fd_ = -1;
  bool owned_ = false;
};

}  // namespace lopside::detail
