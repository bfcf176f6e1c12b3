// Dispatch by content: a file's first bytes say what it is more reliably than its name.
#include "lopside/capture_reader.hpp"

#include <algorithm>
#include <array>
#include <cerrno>
#include <cstring>
#include <fstream>

#include "lopside/error.hpp"

namespace lopside {
namespace {

// Magic numbers of the containers libsndfile reads: RIFF/RIFX (WAV), RF64 and BW64 (EBU Tech
// 3306), "riff" (Sony Wave64 GUID starts with it), fLaC (FLAC format spec), FORM (AIFF),
// OggS (RFC 3533), ".snd" (Sun/NeXT AU), "caff" (Apple CAF).
bool looks_like_sound_file(const std::array<char, 4>& magic) {
  static constexpr std::array<const char*, 10> kMagic{"RIFF", "RIFX", "RF64", "BW64", "riff",
                                                      "fLaC", "FORM", "OggS", ".snd", "caff"};
  for (const char* m : kMagic) {
    if (std::memcmp(magic.data(), m, 4) == 0) return true;
  }
  return false;
}

// Owns the stream that the text reader borrows.
class OwnedTextSource : public SampleSource {
 public:
  OwnedTextSource(std::unique_ptr<std::ifstream> file, const std::string& path,
                  const ReaderOptions& options, std::uintmax_t size)
      : file_(std::move(file)), inner_(open_text_capture(*file_, path, options)), size_(size) {}
  const CaptureInfo& info() const override { return inner_->info(); }
  std::size_t read(SampleBlock& block, std::size_t max_frames) override {
    return inner_->read(block, max_frames);
  }
  const std::vector<std::string>& warnings() const override { return inner_->warnings(); }
  double progress() const override {
    const auto at = file_->rdbuf()->pubseekoff(0, std::ios::cur, std::ios::in);
    if (size_ == 0 || at < 0) return -1.0;
    return std::min(1.0, static_cast<double>(at) / static_cast<double>(size_));
  }

 private:
  std::unique_ptr<std::ifstream> file_;
  std::unique_ptr<SampleSource> inner_;
  std::uintmax_t size_ = 0;
};

}  // namespace

std::unique_ptr<SampleSource> open_capture(const std::filesystem::path& path,
                                           const ReaderOptions& options) {
  const std::string shown = path.string();
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec)) {
    throw InputError(shown, "is a directory; expected a capture file (CSV/TSV text or WAV)");
  }
  auto file = std::make_unique<std::ifstream>(path, std::ios::binary);
  if (!*file) {
    throw InputError(shown, std::string("cannot open the capture: ") + std::strerror(errno));
  }
  std::array<char, 4> magic{};
  file->read(magic.data(), magic.size());
  const auto got = file->gcount();
  if (got == 0) {
    throw InputError(shown, "the file is empty; expected a capture (CSV/TSV text or WAV)");
  }
  if (got == 4 && looks_like_sound_file(magic)) {
    file.reset();
    return open_sound_file(path, options);
  }
  file->clear();
  file->seekg(0);
  const auto size = std::filesystem::file_size(path, ec);
  return std::make_unique<OwnedTextSource>(std::move(file), shown, options, ec ? 0 : size);
}

}  // namespace lopside
