// Outputs never harm what the user owns (lopside/atomic_file.hpp, src/cli/output_paths.hpp):
// devices, FIFOs and symlinks keep what they are, the input capture and an existing output
// survive every refusal and failure, a killed run leaves no temporary file, and a failed
// output ends with status 3 (lopside/error.hpp) naming the output and the system's reason.
//
// Device nodes are made with mknod inside the test's own directory (1:3 and 1:7 are Linux's
// null and full devices, Documentation/admin-guide/devices.txt); this machine's /dev is never
// written. Most cases run as root and again as the ordinary user nobody (65534) through
// setpriv(1), since root passes permission checks an ordinary user meets.

#include <fcntl.h>
#include <gtest/gtest.h>
#include <signal.h>
#include <spawn.h>
#include <sys/stat.h>
#include <sys/sysmacros.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cerrno>
#include <chrono>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <string>
#include <thread>
#include <vector>

#include "cli_support.hpp"

extern char** environ;

namespace fs = std::filesystem;
using lopside::test::Cli;
using lopside::test::RunResult;
using lopside::test::shell_quote;
using lopside::test::slurp;
using nlohmann::json;

namespace {

const std::string kSample =
    std::string(LOPSIDE_SOURCE_DIR) + "/samples/bt32k-unit0417-dc-fault.csv";
constexpr uid_t kNobody = 65534;  // Debian's nobody and nogroup (base-passwd)

enum class User { root, nobody };

std::string user_name(User u) {
  return u == User::root ? "root" : "nobody";
}

bool contains(const std::string& s, const std::string& part) {
  return s.find(part) != std::string::npos;
}

struct stat lstat_of(const fs::path& p) {
  struct stat st {};
  EXPECT_EQ(::lstat(p.c_str(), &st), 0) << p;
  return st;
}

class OutputSafety : public Cli {
 protected:
  void SetUp() override {
    Cli::SetUp();
    // nobody must be able to create files here (the directory is the test's own).
    fs::permissions(dir_, fs::perms::all);
  }

  static bool is_root() { return ::geteuid() == 0; }

  /// Runs lopside as `user`; as nobody through setpriv, whose options drop every group.
  /// nobody may not reach the build tree or the sources (a clone in a 0700 folder, as CI's may
  /// be): the binary and the sample are copied into the test's own directory for its runs.
  RunResult run_as(User user, const std::vector<std::string>& args) {
    if (user == User::root) return run(args);
    const fs::path bin = dir_ / "nobody-lopside";
    const fs::path sample = dir_ / "nobody-sample.csv";
    if (!fs::exists(bin)) {
      fs::copy_file(LOPSIDE_BINARY, bin);
      fs::copy_file(kSample, sample);
      ::chmod(bin.c_str(), 0755);
      ::chmod(sample.c_str(), 0644);
    }
    std::vector<std::string> full{"--reuid=65534", "--regid=65534", "--clear-groups", bin.string()};
    for (const std::string& a : args) full.push_back(a == kSample ? sample.string() : a);
    return run(full, "/usr/bin/setpriv");
  }

  /// A node made by mknod(2) in the test directory, writable by everyone like the real one.
  fs::path device(const std::string& name, unsigned major_no, unsigned minor_no) {
    const fs::path p = dir_ / name;
    EXPECT_EQ(::mknod(p.c_str(), S_IFCHR | 0666, ::makedev(major_no, minor_no)), 0)
        << std::strerror(errno);
    ::chmod(p.c_str(), 0666);  // past the umask
    return p;
  }

  /// Names in the test directory that look like a temporary output (`NAME.tmp-XXXXXX`).
  std::vector<std::string> temp_files() const {
    std::vector<std::string> found;
    for (const auto& e : fs::recursive_directory_iterator(dir_)) {
      const std::string name = e.path().filename().string();
      if (contains(name, ".tmp-")) found.push_back(name);
    }
    return found;
  }

  void give_to_nobody(const fs::path& p) {
    ASSERT_EQ(::lchown(p.c_str(), kNobody, kNobody), 0) << p << ": " << std::strerror(errno);
  }

  /// Starts lopside with standard input from /dev/null, standard output on `stdout_fd` (or
  /// stdout.txt when -1), standard error in stderr.txt, and SIGINT, SIGTERM, SIGHUP and
  /// SIGPIPE at their default actions whatever this test process inherited.
  pid_t start(const std::vector<std::string>& args, int stdout_fd = -1) {
    posix_spawn_file_actions_t actions;
    posix_spawn_file_actions_init(&actions);
    posix_spawn_file_actions_addopen(&actions, 0, "/dev/null", O_RDONLY, 0);
    const std::string out = (dir_ / "stdout.txt").string();
    const std::string err = (dir_ / "stderr.txt").string();
    if (stdout_fd >= 0) {
      posix_spawn_file_actions_adddup2(&actions, stdout_fd, 1);
    } else {
      posix_spawn_file_actions_addopen(&actions, 1, out.c_str(), O_WRONLY | O_CREAT | O_TRUNC,
                                       0644);
    }
    posix_spawn_file_actions_addopen(&actions, 2, err.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
    posix_spawnattr_t attr;
    posix_spawnattr_init(&attr);
    sigset_t defaults;
    sigemptyset(&defaults);
    for (const int sig : {SIGINT, SIGTERM, SIGHUP, SIGPIPE}) sigaddset(&defaults, sig);
    sigset_t none;
    sigemptyset(&none);
    posix_spawnattr_setsigdefault(&attr, &defaults);
    posix_spawnattr_setsigmask(&attr, &none);
    posix_spawnattr_setflags(&attr, POSIX_SPAWN_SETSIGDEF | POSIX_SPAWN_SETSIGMASK);
    std::vector<std::string> all{LOPSIDE_BINARY};
    all.insert(all.end(), args.begin(), args.end());
    std::vector<char*> argv;
    for (std::string& a : all) argv.push_back(a.data());
    argv.push_back(nullptr);
    pid_t pid = -1;
    const int rc = ::posix_spawn(&pid, LOPSIDE_BINARY, &actions, &attr, argv.data(), environ);
    posix_spawn_file_actions_destroy(&actions);
    posix_spawnattr_destroy(&attr);
    EXPECT_EQ(rc, 0) << std::strerror(rc);
    return pid;
  }

  static int wait_for(pid_t pid) {
    int status = 0;
    while (::waitpid(pid, &status, 0) < 0 && errno == EINTR) {
    }
    return status;
  }
};

// --- devices, FIFOs, symlinks: kept what they are -------------------------------------------

TEST_F(OutputSafety, NullDeviceStaysACharacterDevice) {
  if (!is_root()) GTEST_SKIP() << "mknod needs root";
  const fs::path null_node = device("null", 1, 3);
  for (const User user : {User::root, User::nobody}) {
    SCOPED_TRACE(user_name(user));
    const RunResult r = run_as(user, {"measure", kSample, "--json", null_node.string()});
    EXPECT_EQ(r.status, 0) << r.err;
    const struct stat st = lstat_of(null_node);
    EXPECT_TRUE(S_ISCHR(st.st_mode)) << "the node was replaced by a regular file";
    EXPECT_EQ(st.st_rdev, ::makedev(1, 3));
    // The text summary still goes to standard output, since --json is not "-".
    EXPECT_FALSE(r.out.empty());
    EXPECT_TRUE(temp_files().empty());
  }
}

TEST_F(OutputSafety, FullDeviceFailsWithStatus3AndStaysADevice) {
  if (!is_root()) GTEST_SKIP() << "mknod needs root";
  const fs::path full_node = device("full", 1, 7);
  for (const User user : {User::root, User::nobody}) {
    SCOPED_TRACE(user_name(user));
    const RunResult r = run_as(user, {"measure", kSample, "--json", full_node.string()});
    EXPECT_EQ(r.status, 3) << r.err;
    // /dev/full fails every write with ENOSPC (null(4) man page, "full").
    EXPECT_TRUE(contains(r.err, full_node.string())) << r.err;
    EXPECT_TRUE(contains(r.err, std::strerror(ENOSPC))) << r.err;
    const struct stat st = lstat_of(full_node);
    EXPECT_TRUE(S_ISCHR(st.st_mode));
    EXPECT_EQ(st.st_rdev, ::makedev(1, 7));
  }
}

TEST_F(OutputSafety, FifoIsWrittenThroughAndStaysAFifo) {
  const fs::path fifo = dir_ / "results.fifo";
  ASSERT_EQ(::mkfifo(fifo.c_str(), 0666), 0);
  ::chmod(fifo.c_str(), 0666);
  std::vector<User> users{User::root};
  if (is_root()) users.push_back(User::nobody);
  for (const User user : users) {
    SCOPED_TRACE(user_name(user));
    std::string received;
    std::thread reader([&] { received = slurp(fifo); });
    const RunResult r = run_as(user, {"inspect", kSample, "--json", fifo.string()});
    // Should lopside have failed before opening the FIFO, the reader still waits in open(2):
    // a writer that comes and goes releases it with end of file. ENXIO: the reader is gone.
    const int release = ::open(fifo.c_str(), O_WRONLY | O_NONBLOCK);
    if (release >= 0) ::close(release);
    reader.join();
    EXPECT_EQ(r.status, 0) << r.err;
    const json j = json::parse(received, nullptr, false);
    ASSERT_FALSE(j.is_discarded()) << received;
    EXPECT_EQ(j.value("schema", ""), "lopside.inspect/1");
    EXPECT_TRUE(S_ISFIFO(lstat_of(fifo).st_mode));
    EXPECT_TRUE(temp_files().empty());
  }
}

TEST_F(OutputSafety, SymlinkStaysALinkAndItsTargetKeepsModeAndOwner) {
  std::vector<User> users{User::root};
  if (is_root()) users.push_back(User::nobody);
  for (const User user : users) {
    SCOPED_TRACE(user_name(user));
    const fs::path sub = dir_ / ("kept-" + user_name(user));
    fs::create_directory(sub);
    fs::permissions(sub, fs::perms::all);
    const fs::path real = sub / "real.json";
    lopside::test::write_file(real, "old results\n");
    ASSERT_EQ(::chmod(real.c_str(), 0640), 0);
    if (is_root()) give_to_nobody(real);
    // A relative link from another directory: the temporary file belongs beside the target.
    const fs::path link = dir_ / ("link-" + user_name(user) + ".json");
    fs::create_symlink(fs::path(sub.filename()) / "real.json", link);

    const RunResult r = run_as(user, {"measure", kSample, "--json", link.string()});
    EXPECT_EQ(r.status, 0) << r.err;
    EXPECT_TRUE(fs::is_symlink(link)) << "the link was replaced";
    EXPECT_EQ(fs::read_symlink(link), fs::path(sub.filename()) / "real.json");
    const json j = json::parse(slurp(real), nullptr, false);
    ASSERT_FALSE(j.is_discarded()) << slurp(real);
    EXPECT_EQ(j.value("schema", ""), "lopside.measure/1");
    const struct stat st = lstat_of(real);
    EXPECT_TRUE(S_ISREG(st.st_mode));
    EXPECT_EQ(st.st_mode & 07777, 0640u);
    if (is_root()) {
      EXPECT_EQ(st.st_uid, kNobody);  // kept by fchown even when root writes it
      EXPECT_EQ(st.st_gid, kNobody);
    }
    EXPECT_TRUE(temp_files().empty());
  }
}

TEST_F(OutputSafety, SymlinkToADeviceStaysALinkToTheDevice) {
  if (!is_root()) GTEST_SKIP() << "mknod needs root";
  const fs::path null_node = device("null", 1, 3);
  const fs::path link = dir_ / "discard.csv";
  fs::create_symlink("null", link);
  const RunResult r = run({"measure", kSample, "--cycles", link.string()});
  EXPECT_EQ(r.status, 0) << r.err;
  EXPECT_TRUE(fs::is_symlink(link));
  EXPECT_TRUE(S_ISCHR(lstat_of(null_node).st_mode));
}

TEST_F(OutputSafety, DevStdoutIsStandardOutputNotAFileToReplace) {
  // --json /dev/stdout behaves as --json -: the JSON alone on standard output.
  const RunResult r = run({"inspect", kSample, "--json", "/dev/stdout"});
  EXPECT_EQ(r.status, 0) << r.err;
  const json j = json::parse(r.out, nullptr, false);
  ASSERT_FALSE(j.is_discarded()) << r.out;
  EXPECT_EQ(j.value("schema", ""), "lopside.inspect/1");
  // A symlink to /dev/stdout too.
  const fs::path link = dir_ / "out-link";
  fs::create_symlink("/dev/stdout", link);
  const RunResult viaLink = run({"inspect", kSample, "--json", link.string()});
  EXPECT_EQ(viaLink.status, 0) << viaLink.err;
  EXPECT_FALSE(json::parse(viaLink.out, nullptr, false).is_discarded()) << viaLink.out;
  EXPECT_TRUE(fs::is_symlink(link));
}

// --- refused before any work: status 2, nothing touched --------------------------------------

TEST_F(OutputSafety, OutputThatIsTheInputCaptureIsRefused) {
  const fs::path capture = dir_ / "capture.csv";
  fs::copy_file(kSample, capture);
  const std::string before = slurp(capture);
  fs::create_symlink("capture.csv", dir_ / "alias.csv");
  fs::create_hard_link(capture, dir_ / "hardlink.csv");
  const std::vector<std::vector<std::string>> cases{
      {"measure", capture.string(), "--json", capture.string()},
      {"measure", capture.string(), "--cycles", (dir_ / "." / "capture.csv").string()},
      {"measure", capture.string(), "--spectrum", (dir_ / "alias.csv").string()},
      {"measure", (dir_ / "alias.csv").string(), "--json", (dir_ / "hardlink.csv").string()},
      {"inspect", capture.string(), "--json", capture.string()},
      {"swap", kSample, capture.string(), "--json", (dir_ / "alias.csv").string()},
  };
  for (const auto& args : cases) {
    const std::string output = args.back();
    SCOPED_TRACE(args[0] + " … " + args[args.size() - 2] + " " + output);
    const RunResult r = run(args);
    EXPECT_EQ(r.status, 2) << r.err;
    EXPECT_TRUE(contains(r.err, output)) << r.err;
    EXPECT_TRUE(contains(r.err, "input capture")) << r.err;
    EXPECT_TRUE(r.out.empty()) << "work was done before the refusal:\n" << r.out;
    EXPECT_EQ(slurp(capture), before) << "the capture was changed";
    EXPECT_TRUE(fs::is_symlink(dir_ / "alias.csv"));
    EXPECT_TRUE(temp_files().empty());
  }
}

TEST_F(OutputSafety, TwoOutputsToOneFileAreRefused) {
  fs::create_directory(dir_ / "sub");
  const fs::path table = dir_ / "table.csv";
  // A new path given twice in two spellings: nothing may be created.
  RunResult r = run({"measure", kSample, "--cycles", table.string(), "--spectrum",
                     (dir_ / "sub" / ".." / "table.csv").string()});
  EXPECT_EQ(r.status, 2) << r.err;
  EXPECT_TRUE(contains(r.err, "--cycles and --spectrum")) << r.err;
  EXPECT_FALSE(fs::exists(table));
  // An existing file and a symlink to it: the file stays as it was.
  lopside::test::write_file(table, "old table\n");
  fs::create_symlink("table.csv", dir_ / "table-link.csv");
  r = run({"measure", kSample, "--json", (dir_ / "table-link.csv").string(), "--cycles",
           table.string()});
  EXPECT_EQ(r.status, 2) << r.err;
  EXPECT_TRUE(contains(r.err, table.string())) << r.err;
  EXPECT_EQ(slurp(table), "old table\n");
  EXPECT_TRUE(temp_files().empty());
}

TEST_F(OutputSafety, TwoOutputsToStandardOutputAreRefused) {
  for (const auto& [json_to, cycles_to] : std::vector<std::pair<std::string, std::string>>{
           {"-", "-"}, {"-", "/dev/stdout"}, {"/dev/fd/1", "/dev/stdout"}}) {
    SCOPED_TRACE(json_to + " " + cycles_to);
    const RunResult r = run({"measure", kSample, "--json", json_to, "--cycles", cycles_to});
    EXPECT_EQ(r.status, 2) << r.err;
    EXPECT_TRUE(contains(r.err, "both go to standard output")) << r.err;
    EXPECT_TRUE(r.out.empty()) << r.out;
  }
  // The text summary is on standard output unless --json - takes its place, so a table there
  // would be mixed into it: refused too (README, "Outputs").
  const RunResult r = run({"measure", kSample, "--cycles", "-"});
  EXPECT_EQ(r.status, 2) << r.err;
  EXPECT_TRUE(contains(r.err, "text summary")) << r.err;
  EXPECT_TRUE(r.out.empty()) << r.out;
}

TEST_F(OutputSafety, OutputThatIsWhereStandardOutputIsRedirectedIsRefused) {
  const fs::path out = dir_ / "all.txt";
  const std::string cmd = shell_quote(LOPSIDE_BINARY) + " inspect " + shell_quote(kSample) +
                          " --json " + shell_quote(out.string()) + " >" +
                          shell_quote(out.string()) + " 2>" +
                          shell_quote((dir_ / "err.txt").string());
  const int raw = std::system(cmd.c_str());
  ASSERT_TRUE(WIFEXITED(raw));
  EXPECT_EQ(WEXITSTATUS(raw), 2) << slurp(dir_ / "err.txt");
  EXPECT_TRUE(contains(slurp(dir_ / "err.txt"), "redirected")) << slurp(dir_ / "err.txt");
}

// --- failures: status 3, an existing output untouched ----------------------------------------

TEST_F(OutputSafety, ClosedStandardOutputFailsWithStatus3BeforeAnyWork) {
  const fs::path json_path = file("old.json", "old results\n");
  const fs::path err = dir_ / "err.txt";
  const std::string cmd = shell_quote(LOPSIDE_BINARY) + " measure " + shell_quote(kSample) +
                          " --json " + shell_quote(json_path.string()) + " >&- 2>" +
                          shell_quote(err.string());
  const int raw = std::system(cmd.c_str());
  ASSERT_TRUE(WIFEXITED(raw));
  EXPECT_EQ(WEXITSTATUS(raw), 3) << slurp(err);
  EXPECT_TRUE(contains(slurp(err), "standard output")) << slurp(err);
  EXPECT_TRUE(contains(slurp(err), std::strerror(EBADF))) << slurp(err);
  EXPECT_EQ(slurp(json_path), "old results\n");
  EXPECT_TRUE(temp_files().empty());
}

TEST_F(OutputSafety, BrokenPipeFailsWithStatus3) {
  // A pipe whose reader has gone: lopside ignores SIGPIPE, so write(2) fails with EPIPE
  // (pipe(7)) and is reported, instead of the process dying silently.
  for (const bool json_to_stdout : {false, true}) {
    SCOPED_TRACE(json_to_stdout ? "--json -" : "text summary");
    int fds[2];
    ASSERT_EQ(::pipe(fds), 0);
    ::close(fds[0]);
    std::vector<std::string> args{"measure", kSample};
    if (json_to_stdout) args.insert(args.end(), {"--json", "-"});
    const pid_t pid = start(args, fds[1]);
    ::close(fds[1]);
    const int status = wait_for(pid);
    ASSERT_TRUE(WIFEXITED(status)) << "killed by signal " << WTERMSIG(status);
    EXPECT_EQ(WEXITSTATUS(status), 3);
    const std::string err = slurp(dir_ / "stderr.txt");
    EXPECT_TRUE(contains(err, "standard output")) << err;
    EXPECT_TRUE(contains(err, std::strerror(EPIPE))) << err;
  }
}

TEST_F(OutputSafety, FailedRunLeavesTheExistingOutputUntouched) {
  const fs::path bad = file("bad.csv", "time (s),current (A)\n0,1\n1e-6,oops\n");
  const fs::path json_path = file("results.json", "old results\n");
  const fs::path cycles = file("cycles.csv", "old cycles\n");
  const RunResult r =
      run({"measure", bad.string(), "--json", json_path.string(), "--cycles", cycles.string()});
  EXPECT_EQ(r.status, 2) << r.err;
  EXPECT_EQ(slurp(json_path), "old results\n");
  EXPECT_EQ(slurp(cycles), "old cycles\n");
  EXPECT_TRUE(temp_files().empty());
}

TEST_F(OutputSafety, RegularFileIsReplacedKeepingItsMode) {
  const fs::path json_path = file("results.json", "old results\n");
  ASSERT_EQ(::chmod(json_path.c_str(), 0604), 0);
  const struct stat before = lstat_of(json_path);
  const RunResult r = run({"inspect", kSample, "--json", json_path.string()});
  EXPECT_EQ(r.status, 0) << r.err;
  const struct stat after = lstat_of(json_path);
  EXPECT_NE(after.st_ino, before.st_ino) << "written in place rather than renamed over";
  EXPECT_EQ(after.st_mode & 07777, 0604u);
  EXPECT_FALSE(json::parse(slurp(json_path), nullptr, false).is_discarded());
}

TEST_F(OutputSafety, UnwritableOutputFailsWithStatus3AsAnOrdinaryUser) {
  if (!is_root()) GTEST_SKIP() << "needs root to run as nobody";
  // A directory nobody may not write: creating the output fails, EACCES.
  const fs::path locked = dir_ / "locked";
  fs::create_directory(locked);
  fs::permissions(locked, fs::perms::owner_all | fs::perms::group_read | fs::perms::group_exec |
                              fs::perms::others_read | fs::perms::others_exec);
  RunResult r = run_as(User::nobody, {"inspect", kSample, "--json", (locked / "x.json").string()});
  EXPECT_EQ(r.status, 3) << r.err;
  EXPECT_TRUE(contains(r.err, (locked / "x.json").string())) << r.err;
  EXPECT_TRUE(contains(r.err, std::strerror(EACCES))) << r.err;
  EXPECT_TRUE(r.out.empty()) << "work was done before the failure:\n" << r.out;
  // nobody's own file made read-only is not replaced behind its owner's back, although the
  // directory would allow the rename.
  const fs::path readonly = file("readonly.json", "keep me\n");
  give_to_nobody(readonly);
  ASSERT_EQ(::chmod(readonly.c_str(), 0444), 0);
  r = run_as(User::nobody, {"inspect", kSample, "--json", readonly.string()});
  EXPECT_EQ(r.status, 3) << r.err;
  EXPECT_TRUE(contains(r.err, std::strerror(EACCES))) << r.err;
  EXPECT_EQ(slurp(readonly), "keep me\n");
  EXPECT_TRUE(temp_files().empty());
}

// --- a killed run leaves no temporary file ---------------------------------------------------

TEST_F(OutputSafety, KilledRunRemovesItsTemporaryFilesAndDiesOfTheSignal) {
  for (const int sig : {SIGTERM, SIGINT, SIGHUP}) {
    SCOPED_TRACE(sigabbrev_np(sig));
    const fs::path sub = dir_ / sigabbrev_np(sig);
    fs::create_directory(sub);
    // The capture comes through a FIFO that this test holds open: lopside is certainly still
    // reading when the signal comes, whatever the machine's speed, and its outputs are open
    // (commands open them before reading, src/cli/measure.cpp).
    const fs::path capture = sub / "capture.csv";
    ASSERT_EQ(::mkfifo(capture.c_str(), 0600), 0);
    const fs::path json_path = sub / "results.json";
    const fs::path cycles = sub / "cycles.csv";
    lopside::test::write_file(json_path, "old results\n");
    lopside::test::write_file(cycles, "old cycles\n");
    const pid_t pid = start({"measure", capture.string(), "--json", json_path.string(), "--cycles",
                             cycles.string(), "--spectrum", (sub / "new-spectrum.csv").string()});
    // Wait for lopside to open the capture (it has created its temporary files by then); a
    // non-blocking open(2) of a FIFO for writing fails with ENXIO until a reader is there
    // (fifo(7)). The wait gives up if lopside has ended instead.
    int writer = -1;
    const auto give_up = std::chrono::steady_clock::now() + std::chrono::seconds(60);
    while (std::chrono::steady_clock::now() < give_up) {
      writer = ::open(capture.c_str(), O_WRONLY | O_NONBLOCK);
      if (writer >= 0) break;
      int status = 0;
      if (::waitpid(pid, &status, WNOHANG) == pid) {
        FAIL() << "lopside ended before reading: " << slurp(dir_ / "stderr.txt");
      }
      std::this_thread::sleep_for(std::chrono::milliseconds(10));
    }
    ASSERT_GE(writer, 0) << "lopside never opened the capture";
    EXPECT_EQ(temp_files().size(), 3u) << "three outputs, three temporary files while running";
    // A quarter of the sample (1000 of its 4000 rows), so that cycles are found and the
    // temporary table has had writes; the FIFO stays open, so lopside then waits for more.
    const std::string sample = slurp(kSample);
    std::size_t cut = 0;
    for (int lines = 0; lines < 1000; ++lines) cut = sample.find('\n', cut) + 1;
    const std::string part = sample.substr(0, cut);
    ASSERT_EQ(::write(writer, part.data(), part.size()), static_cast<ssize_t>(part.size()));

    ASSERT_EQ(::kill(pid, sig), 0);
    const int status = wait_for(pid);
    ::close(writer);
    ASSERT_TRUE(WIFSIGNALED(status))
        << "exited with " << WEXITSTATUS(status) << ": " << slurp(dir_ / "stderr.txt");
    EXPECT_EQ(WTERMSIG(status), sig);
    EXPECT_TRUE(temp_files().empty()) << temp_files().front();
    EXPECT_EQ(slurp(json_path), "old results\n");
    EXPECT_EQ(slurp(cycles), "old cycles\n");
    EXPECT_FALSE(fs::exists(sub / "new-spectrum.csv"));
  }
}

}  // namespace
