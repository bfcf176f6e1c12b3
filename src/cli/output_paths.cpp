#include "output_paths.hpp"

#include <sys/stat.h>
#include <unistd.h>

#include <filesystem>
#include <optional>

#include "lopside/atomic_file.hpp"
#include "lopside/error.hpp"

namespace lopside::cli {
namespace {

namespace fs = std::filesystem;

// What a path finally is, for comparing two of them: standard output, a file by device and
// inode (which sees through symlinks, hard links, "./" and "../"), or a file yet to be created
// by its canonical path (weakly_canonical resolves the existing directories above it).
struct Identity {
  bool standard_output = false;
  std::optional<std::pair<dev_t, ino_t>> inode;
  std::string new_path;

  bool same_as(const Identity& o) const {
    if (standard_output || o.standard_output) return standard_output && o.standard_output;
    if (inode || o.inode) return inode == o.inode;
    return new_path == o.new_path;
  }
};

std::optional<std::pair<dev_t, ino_t>> inode_of(const struct stat& st) {
  return std::make_pair(st.st_dev, st.st_ino);
}

Identity identify(const std::string& given) {
  const OutputTarget t = resolve_output(given);
  Identity id;
  struct stat st {};
  switch (t.kind) {
    case OutputTarget::Kind::standard_output:
      id.standard_output = true;
      break;
    case OutputTarget::Kind::descriptor:
      // A descriptor that is not open is left for AtomicOutput to report as an output failure.
      if (::fstat(t.fd, &st) == 0) id.inode = inode_of(st);
      id.new_path = "fd:" + std::to_string(t.fd);
      break;
    case OutputTarget::Kind::replace:
    case OutputTarget::Kind::direct:
      if (t.exists && ::stat(t.path.c_str(), &st) == 0) {
        id.inode = inode_of(st);
      } else {
        std::error_code ec;
        const fs::path canonical = fs::weakly_canonical(t.path, ec);
        id.new_path = (ec ? t.path.lexically_normal() : canonical).string();
      }
      break;
  }
  return id;
}

}  // namespace

void check_output_paths(const std::vector<std::string>& inputs,
                        const std::vector<RequestedOutput>& outputs) {
  std::vector<const RequestedOutput*> asked;
  std::vector<Identity> ids;
  for (const RequestedOutput& o : outputs) {
    if (o.path.empty()) continue;
    asked.push_back(&o);
    ids.push_back(identify(o.path));
  }

  // 1. Never the input: `--json capture.csv` would replace the recording with its own result.
  for (std::size_t i = 0; i < asked.size(); ++i) {
    if (!ids[i].inode) continue;
    for (const std::string& input : inputs) {
      struct stat st {};
      if (input.empty() || ::stat(input.c_str(), &st) != 0) continue;  // the reader reports it
      if (ids[i].inode == inode_of(st)) {
        throw InputError(asked[i]->path, asked[i]->flag + " names the input capture " + input +
                                             "; it would be overwritten. Choose another file");
      }
    }
  }

  // 2. Two outputs to one place: the second would replace the first, or both would be mixed.
  for (std::size_t i = 0; i < asked.size(); ++i) {
    for (std::size_t j = 0; j < i; ++j) {
      if (!ids[i].same_as(ids[j])) continue;
      if (ids[i].standard_output) {
        throw InputError(asked[i]->path, asked[j]->flag + " and " + asked[i]->flag +
                                             " both go to standard output; give one a file");
      }
      throw InputError(asked[i]->path, asked[j]->flag + " and " + asked[i]->flag +
                                           " name the same file; give each its own");
    }
  }

  // 3. Standard output carries the text summary unless an output that replaces it goes there
  // (`--json -`); anything else on standard output would be mixed into the summary.
  bool summary_replaced = false;
  for (std::size_t i = 0; i < asked.size(); ++i) {
    if (ids[i].standard_output && asked[i]->replaces_summary) summary_replaced = true;
  }
  for (std::size_t i = 0; i < asked.size(); ++i) {
    if (ids[i].standard_output && !asked[i]->replaces_summary && !summary_replaced) {
      throw InputError(asked[i]->path,
                       asked[i]->flag +
                           " cannot go to standard output: the text summary is written there "
                           "(with --json - the JSON takes its place); give it a file");
    }
  }

  // 4. `lopside measure c.csv --json out.json > out.json`: the text summary and the JSON would
  // both claim one file. Only a regular file counts: `> /dev/null` with `--cycles /dev/null`
  // harms nothing.
  struct stat out_st {};
  if (::fstat(STDOUT_FILENO, &out_st) == 0 && S_ISREG(out_st.st_mode)) {
    for (std::size_t i = 0; i < asked.size(); ++i) {
      if (!ids[i].standard_output && ids[i].inode == inode_of(out_st)) {
        throw InputError(asked[i]->path, asked[i]->flag +
                                             " names the file standard output is redirected "
                                             "to; give it another file");
      }
    }
  }
}

}  // namespace lopside::cli
