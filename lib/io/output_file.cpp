#include "io/output_file.hpp"

#include <atomic>
#include <cerrno>
#include <csignal>
#include <climits>
#include <cstdio>
#include <cstring>
#include <fcntl.h>
#include <filesystem>
#include <iostream>
#include <mutex>
#include <streambuf>
#include <sys/stat.h>
#include <unistd.h>
#include <vector>

#include "io/errors.hpp"

namespace ordex {
namespace {

// ---- Temporaries removed on SIGINT/SIGTERM ------------------------------------------------
// The handler may only use async-signal-safe calls (unlink, sigaction, raise), so the paths
// live in fixed buffers and a slot is marked used only once its path is complete.
constexpr int kSlots = 64;
constexpr std::size_t kSlotBytes = PATH_MAX;
char g_temp_path[kSlots][kSlotBytes];
volatile std::sig_atomic_t g_temp_used[kSlots];
std::mutex g_registry_mutex;
bool g_handlers_installed = false;
const int kCleanupSignals[] = {SIGINT, SIGTERM, SIGHUP, SIGPIPE};

extern "C" void remove_temporaries_and_reraise(int sig) {
  for (int i = 0; i < kSlots; ++i)
    if (g_temp_used[i]) ::unlink(g_temp_path[i]);
  struct sigaction dfl {};
  dfl.sa_handler = SIG_DFL;
  sigemptyset(&dfl.sa_mask);
  ::sigaction(sig, &dfl, nullptr);
  // Blocked while the handler runs; delivered (with the default action) when it returns.
  ::raise(sig);
}

void install_handlers_once() {
  if (g_handlers_installed) return;
  g_handlers_installed = true;
  for (int sig : kCleanupSignals) {
    struct sigaction old {};
    if (::sigaction(sig, nullptr, &old) != 0) continue;
    // A signal the caller ignores (nohup) or handles itself is left alone.
    if (old.sa_handler != SIG_DFL || (old.sa_flags & SA_SIGINFO)) continue;
    struct sigaction sa {};
    sa.sa_handler = remove_temporaries_and_reraise;
    sigemptyset(&sa.sa_mask);
    for (int other : kCleanupSignals) sigaddset(&sa.sa_mask, other);
    ::sigaction(sig, &sa, nullptr);
  }
}

int register_temporary(const std::string& path) {
  std::lock_guard<std::mutex> lock(g_registry_mutex);
  install_handlers_once();
  if (path.size() >= kSlotBytes) return -1;
  for (int i = 0; i < kSlots; ++i)
    if (!g_temp_used[i]) {
      std::memcpy(g_temp_path[i], path.c_str(), path.size() + 1);
      std::atomic_signal_fence(std::memory_order_seq_cst);
      g_temp_used[i] = 1;
      return i;
    }
  return -1;  // more than kSlots open outputs: still removed on errors, not on signals
}

void unregister_temporary(int slot) {
  if (slot < 0) return;
  std::lock_guard<std::mutex> lock(g_registry_mutex);
  g_temp_used[slot] = 0;
}

// ---- A buffered stream over a file descriptor that remembers the first write error --------
class FdBuf : public std::streambuf {
 public:
  explicit FdBuf(int fd) : fd_(fd), buf_(1 << 16) { setp(buf_.data(), buf_.data() + buf_.size()); }
  int error() const { return error_; }
  bool drain() {
    const char* p = pbase();
    std::size_t left = static_cast<std::size_t>(pptr() - pbase());
    while (left > 0 && error_ == 0) {
      ssize_t w = ::write(fd_, p, left);
      if (w < 0) {
        if (errno == EINTR) continue;
        error_ = errno;
        break;
      }
      p += w;
      left -= static_cast<std::size_t>(w);
    }
    setp(buf_.data(), buf_.data() + buf_.size());
    return error_ == 0;
  }

 protected:
  int_type overflow(int_type c) override {
    if (!drain()) return traits_type::eof();
    if (!traits_type::eq_int_type(c, traits_type::eof())) {
      *pptr() = traits_type::to_char_type(c);
      pbump(1);
    }
    return traits_type::not_eof(c);
  }
  int sync() override { return drain() ? 0 : -1; }

 private:
  int fd_;
  std::vector<char> buf_;
  int error_ = 0;
};

std::string reason(int err) { return std::strerror(err); }

bool is_stdout_name(const std::string& p) { return p == "-" || p == "/dev/stdout"; }

// The descriptor a stream name stands for, or -1.
int stream_fd(const std::string& p) {
  if (is_stdout_name(p)) return STDOUT_FILENO;
  if (p == "/dev/stderr") return STDERR_FILENO;
  for (const char* prefix : {"/dev/fd/", "/proc/self/fd/"}) {
    const std::size_t n = std::strlen(prefix);
    if (p.size() > n && p.compare(0, n, prefix) == 0 &&
        p.find_first_not_of("0123456789", n) == std::string::npos && p.size() - n < 9)
      return std::stoi(p.substr(n));
  }
  return -1;
}

std::string folder_of(const std::string& path) {
  std::string dir = std::filesystem::path(path).parent_path().string();
  return dir.empty() ? "." : dir;
}

mode_t new_file_mode() {
  mode_t mask = ::umask(0);
  ::umask(mask);
  return 0666 & ~mask;
}

}  // namespace

bool is_stream_name(const std::string& path) { return stream_fd(path) >= 0; }

struct OutputFile::Impl {
  int fd = -1;
  bool own_fd = false;     // close it at the end (not standard output)
  bool direct = false;     // written in place: stream, device, FIFO
  std::string temp;        // the temporary (regular targets)
  int slot = -1;           // its registry slot
  bool committed = false;
  std::unique_ptr<FdBuf> buf;
  std::unique_ptr<std::ostream> os;
};

OutputFile::OutputFile(const std::string& path) : impl_(std::make_unique<Impl>()), path_(path) {
  Impl& m = *impl_;
  if (path.empty()) throw InputError("an output path is empty");
  const int sfd = stream_fd(path);
  struct stat st {};
  const bool exists = sfd < 0 && ::stat(path.c_str(), &st) == 0;
  if (sfd >= 0) {
    if (sfd == STDOUT_FILENO) std::cout.flush();
    m.fd = sfd;
    m.direct = true;
  } else if (exists && S_ISDIR(st.st_mode)) {
    throw InputError(path + ": is a folder, not an output file");
  } else if (exists && S_ISBLK(st.st_mode)) {
    throw InputError(path + ": is a block device, not an output file");
  } else if (exists && !S_ISREG(st.st_mode)) {
    // Character device, FIFO or socket: written in place, never replaced by a regular file.
    m.fd = ::open(path.c_str(), O_WRONLY | O_NOCTTY | O_CLOEXEC);
    if (m.fd < 0) throw InputError(path + ": cannot open for writing (" + reason(errno) + ")");
    m.own_fd = true;
    m.direct = true;
  } else {
    std::string tmpl = folder_of(path) + "/.ordex-XXXXXX";
    std::vector<char> name(tmpl.begin(), tmpl.end());
    name.push_back('\0');
    m.fd = ::mkostemp(name.data(), O_CLOEXEC);
    if (m.fd < 0) throw InputError(path + ": cannot create a file in its folder (" + reason(errno) + ")");
    m.temp = name.data();
    m.own_fd = true;
    m.slot = register_temporary(m.temp);
    // mkstemp creates 0600; the result gets the target's mode, or the usual one for a new file.
    ::fchmod(m.fd, exists ? (st.st_mode & 07777) : new_file_mode());
  }
  m.buf = std::make_unique<FdBuf>(m.fd);
  m.os = std::make_unique<std::ostream>(m.buf.get());
  m.os->precision(17);
}

OutputFile::~OutputFile() {
  Impl& m = *impl_;
  if (m.own_fd && m.fd >= 0) ::close(m.fd);
  if (!m.committed && !m.temp.empty()) ::unlink(m.temp.c_str());
  unregister_temporary(m.slot);
}

std::ostream& OutputFile::stream() { return *impl_->os; }

const std::string& OutputFile::temporary_path() const { return impl_->temp; }

void OutputFile::commit() {
  Impl& m = *impl_;
  if (m.committed) return;
  m.os->flush();
  int err = m.buf->drain() ? 0 : m.buf->error();
  if (err == 0 && m.fd == STDOUT_FILENO) {
    // Anything the C library or std::cout buffered for standard output must reach it too.
    std::cout.flush();
    if (std::fflush(stdout) != 0 || std::ferror(stdout) || !std::cout) err = errno ? errno : EIO;
  }
  if (err == 0 && m.own_fd) {
    if (::close(m.fd) != 0) err = errno;
    m.fd = -1;
  }
  if (err == 0 && !m.direct && std::rename(m.temp.c_str(), path_.c_str()) != 0) err = errno;
  if (err != 0) {
    if (!m.temp.empty()) ::unlink(m.temp.c_str());
    m.temp.clear();
    throw InputError((path_ == "-" ? std::string("standard output") : path_) + ": cannot write (" +
                     reason(err) + ")");
  }
  m.committed = true;
}

void write_text_file(const std::string& path, const std::string& text) {
  OutputFile f(path);
  f.stream() << text;
  f.commit();
}

// ---- Checking outputs against inputs --------------------------------------------------------
namespace {

struct FileId {
  std::string path;       // as given
  std::string canonical;  // links and ".." resolved as far as the path exists
  bool exists = false;
  dev_t dev = 0;
  ino_t ino = 0;
};

std::string canonical_of(const std::string& p) {
  std::error_code ec;
  std::filesystem::path c = std::filesystem::weakly_canonical(p, ec);
  return ec ? std::filesystem::path(p).lexically_normal().string() : c.string();
}

// Rejects what the file system itself cannot take: a component longer than NAME_MAX or a path
// longer than PATH_MAX (stat would say so too, but only for existing folders).
void require_usable_name(const std::string& p) {
  if (p.size() >= PATH_MAX) throw InputError(p.substr(0, 80) + "...: path too long");
  for (const auto& part : std::filesystem::path(p))
    if (part.string().size() > NAME_MAX)
      throw InputError(p + ": a name in the path is longer than " + std::to_string(NAME_MAX) + " bytes");
}

}  // namespace

void check_outputs(const std::vector<std::string>& outputs, const std::vector<std::string>& inputs) {
  std::vector<FileId> ins;
  for (const std::string& p : inputs) {
    if (p.empty() || is_stream_name(p)) continue;
    FileId id;
    id.path = p;
    struct stat st {};
    if (::stat(p.c_str(), &st) == 0 && !S_ISCHR(st.st_mode) && !S_ISFIFO(st.st_mode)) {
      id.exists = true;
      id.dev = st.st_dev;
      id.ino = st.st_ino;
    }
    id.canonical = canonical_of(p);
    ins.push_back(id);
  }
  int to_stdout = 0;
  std::vector<FileId> outs;
  for (const std::string& p : outputs) {
    if (p.empty()) continue;
    if (is_stdout_name(p)) {
      if (++to_stdout > 1)
        throw InputError("'" + p + "' (standard output) given to two outputs; at most one can use it");
      continue;
    }
    if (is_stream_name(p)) continue;
    require_usable_name(p);
    FileId id;
    id.path = p;
    struct stat st {};
    if (::stat(p.c_str(), &st) == 0) {
      if (S_ISDIR(st.st_mode)) throw InputError(p + ": is a folder, not an output file");
      if (S_ISBLK(st.st_mode)) throw InputError(p + ": is a block device, not an output file");
      if (!S_ISREG(st.st_mode)) continue;  // a device or FIFO, written in place
      id.exists = true;
      id.dev = st.st_dev;
      id.ino = st.st_ino;
    } else if (errno == ENOENT) {
      // Absent (or a dangling link): its folder must exist.
      const std::string dir = folder_of(p);
      struct stat ds {};
      if (::stat(dir.c_str(), &ds) != 0)
        throw InputError(p + ": cannot write into the folder " + dir + " (" + reason(errno) + ")");
      if (!S_ISDIR(ds.st_mode)) throw InputError(p + ": " + dir + " is not a folder");
    } else {
      throw InputError(p + ": cannot use this path (" + reason(errno) + ")");
    }
    id.canonical = canonical_of(p);
    auto same = [&](const FileId& a) {
      return (id.exists && a.exists) ? (a.dev == id.dev && a.ino == id.ino) : a.canonical == id.canonical;
    };
    for (const FileId& in : ins)
      if (same(in))
        throw InputError(p + ": is an input of this run (" + in.path +
                         "); writing it would destroy it, so give the output another name");
    for (const FileId& o : outs)
      if (same(o))
        throw InputError(p + ": named by two outputs (also " + o.path + "); give each output its own file");
    outs.push_back(id);
  }
}

}  // namespace ordex
