#include "platform/net.h"

#include <arpa/inet.h>
#include <cerrno>
#include <cstring>
#include <fcntl.h>
#include <ifaddrs.h>
#include <netdb.h>
#include <netinet/in.h>
#include <netinet/tcp.h>
#include <poll.h>
#include <sys/socket.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>

namespace furrow {
namespace {

std::string errno_words() { return std::strerror(errno); }

// Waits until fd is ready for `events` or the deadline passes.
bool wait_for(int fd, short events, int timeout_ms) {
  pollfd p{fd, events, 0};
  for (;;) {
    const int r = ::poll(&p, 1, timeout_ms);
    if (r > 0) return true;
    if (r == 0) return false;
    if (errno != EINTR) return false;
  }
}

std::string peer_words(const sockaddr_in& a) {
  char ip[INET_ADDRSTRLEN] = {0};
  ::inet_ntop(AF_INET, &a.sin_addr, ip, sizeof ip);
  return std::string(ip) + ":" + std::to_string(ntohs(a.sin_port));
}

}  // namespace

TcpStream& TcpStream::operator=(TcpStream&& o) noexcept {
  if (this != &o) {
    close();
    fd_ = o.fd_;
    peer_ = std::move(o.peer_);
    timeout_ms_ = o.timeout_ms_;
    o.fd_ = -1;
  }
  return *this;
}

TcpStream::~TcpStream() { close(); }

long long steady_now_ms() {
  return std::chrono::duration_cast<std::chrono::milliseconds>(std::chrono::steady_clock::now().time_since_epoch()).count();
}

int TcpStream::wait_ms() const {
  if (deadline_ms_ == 0) return timeout_ms_;
  const long long left = deadline_ms_ - steady_now_ms();
  if (left <= 0) return 0;
  return static_cast<int>(std::min<long long>(left, timeout_ms_));
}

void TcpStream::close() {
  if (fd_ >= 0) ::close(fd_);
  fd_ = -1;
}

Result<TcpStream> TcpStream::connect(const std::string& host, int port, int timeout_ms) {
  addrinfo hints{};
  hints.ai_family = AF_INET;
  hints.ai_socktype = SOCK_STREAM;
  addrinfo* found = nullptr;
  if (const int e = ::getaddrinfo(host.c_str(), std::to_string(port).c_str(), &hints, &found); e != 0 || !found)
    return make_problem("cannot find the station '" + host + "' on the network (" + gai_strerror(e) + ")");
  const int fd = ::socket(AF_INET, SOCK_STREAM | SOCK_CLOEXEC, 0);
  if (fd < 0) {
    ::freeaddrinfo(found);
    return make_problem("cannot open a network connection: " + errno_words());
  }
  const int flags = ::fcntl(fd, F_GETFL, 0);
  ::fcntl(fd, F_SETFL, flags | O_NONBLOCK);
  int r = ::connect(fd, found->ai_addr, found->ai_addrlen);
  sockaddr_in to{};
  std::memcpy(&to, found->ai_addr, std::min(sizeof to, static_cast<size_t>(found->ai_addrlen)));
  ::freeaddrinfo(found);
  const std::string where = host + ":" + std::to_string(port);
  if (r < 0 && errno != EINPROGRESS) {
    const std::string why = errno_words();
    ::close(fd);
    return make_problem("cannot reach the station at " + where + ": " + why);
  }
  if (r < 0) {
    if (!wait_for(fd, POLLOUT, timeout_ms)) {
      ::close(fd);
      return make_problem("the station at " + where + " did not answer within " + std::to_string(timeout_ms / 1000) +
                          " s (is it serving, and on this network?)");
    }
    int err = 0;
    socklen_t len = sizeof err;
    ::getsockopt(fd, SOL_SOCKET, SO_ERROR, &err, &len);
    if (err != 0) {
      ::close(fd);
      return make_problem("cannot reach the station at " + where + ": " + std::strerror(err));
    }
  }
  const int one = 1;
  ::setsockopt(fd, IPPROTO_TCP, TCP_NODELAY, &one, sizeof one);
  TcpStream s(fd, peer_words(to));
  s.set_timeout(timeout_ms);
  return s;
}

Status TcpStream::write_all(std::string_view bytes) {
  if (fd_ < 0) return make_problem("the connection is closed");
  size_t done = 0;
  while (done < bytes.size()) {
    const ssize_t n = ::send(fd_, bytes.data() + done, bytes.size() - done, MSG_NOSIGNAL);
    if (n > 0) {
      done += static_cast<size_t>(n);
      continue;
    }
    if (n < 0 && errno == EINTR) continue;
    if (n < 0 && (errno == EAGAIN || errno == EWOULDBLOCK)) {
      const int wait = wait_ms();
      if (wait == 0) return make_problem("the other side took too long");
      if (!wait_for(fd_, POLLOUT, wait)) return make_problem("the connection stalled (nothing moved for " +
                                                             std::to_string(timeout_ms_ / 1000) + " s)");
      continue;
    }
    return make_problem("the connection was cut: " + errno_words());
  }
  return ok_status();
}

Result<std::string> TcpStream::read_exact(size_t n) {
  if (fd_ < 0) return make_problem("the connection is closed");
  std::string out(n, '\0');
  size_t done = 0;
  while (done < n) {
    const ssize_t r = ::recv(fd_, out.data() + done, n - done, 0);
    if (r > 0) {
      done += static_cast<size_t>(r);
      continue;
    }
    if (r == 0) return make_problem("the connection was closed by the other side");
    if (errno == EINTR) continue;
    if (errno == EAGAIN || errno == EWOULDBLOCK) {
      const int wait = wait_ms();
      if (wait == 0) return make_problem("the other side took too long");
      if (!wait_for(fd_, POLLIN, wait))
        return make_problem("the connection stalled (nothing came for " + std::to_string(timeout_ms_ / 1000) + " s)");
      continue;
    }
    return make_problem("the connection was cut: " + errno_words());
  }
  return out;
}

TcpListener::~TcpListener() {
  if (fd_ >= 0) ::close(fd_);
}

Result<TcpListener> TcpListener::listen(const std::string& address, int port) {
  const int fd = ::socket(AF_INET, SOCK_STREAM | SOCK_CLOEXEC, 0);
  if (fd < 0) return make_problem("cannot open a network socket: " + errno_words());
  const int one = 1;
  ::setsockopt(fd, SOL_SOCKET, SO_REUSEADDR, &one, sizeof one);
  sockaddr_in a{};
  a.sin_family = AF_INET;
  a.sin_port = htons(static_cast<uint16_t>(port));
  if (::inet_pton(AF_INET, address.c_str(), &a.sin_addr) != 1) {
    ::close(fd);
    return make_problem("'" + address + "' is not an IPv4 address to listen on");
  }
  if (::bind(fd, reinterpret_cast<sockaddr*>(&a), sizeof a) < 0 || ::listen(fd, 64) < 0) {
    const std::string why = errno_words();
    ::close(fd);
    return make_problem("cannot listen on " + address + ":" + std::to_string(port) + ": " + why +
                        (port != 0 ? " (is another station already serving on this port?)" : ""));
  }
  socklen_t len = sizeof a;
  ::getsockname(fd, reinterpret_cast<sockaddr*>(&a), &len);
  TcpListener l;
  l.fd_ = fd;
  l.port_ = ntohs(a.sin_port);
  return l;
}

Result<TcpStream> TcpListener::accept(int timeout_ms) {
  if (!wait_for(fd_, POLLIN, timeout_ms)) return TcpStream();
  sockaddr_in from{};
  socklen_t len = sizeof from;
  const int fd = ::accept4(fd_, reinterpret_cast<sockaddr*>(&from), &len, SOCK_CLOEXEC | SOCK_NONBLOCK);
  if (fd < 0) {
    if (errno == EINTR || errno == EAGAIN || errno == ECONNABORTED) return TcpStream();
    return make_problem("cannot take a connection: " + errno_words());
  }
  const int one = 1;
  ::setsockopt(fd, IPPROTO_TCP, TCP_NODELAY, &one, sizeof one);
  return TcpStream(fd, peer_words(from));
}

std::string local_addresses() {
  ifaddrs* list = nullptr;
  if (::getifaddrs(&list) != 0) return {};
  std::string out;
  for (ifaddrs* i = list; i; i = i->ifa_next) {
    if (!i->ifa_addr || i->ifa_addr->sa_family != AF_INET) continue;
    const auto* a = reinterpret_cast<const sockaddr_in*>(i->ifa_addr);
    char ip[INET_ADDRSTRLEN] = {0};
    ::inet_ntop(AF_INET, &a->sin_addr, ip, sizeof ip);
    if (std::string(ip).rfind("127.", 0) == 0) continue;
    out += (out.empty() ? "" : ", ") + std::string(ip);
  }
  ::freeifaddrs(list);
  return out;
}

Result<std::pair<std::string, int>> parse_host_port(const std::string& text, int default_port) {
  std::string host = text;
  int port = default_port;
  if (const size_t colon = text.rfind(':'); colon != std::string::npos) {
    host = text.substr(0, colon);
    const std::string p = text.substr(colon + 1);
    if (p.empty() || p.size() > 5 || p.find_first_not_of("0123456789") != std::string::npos || std::stoi(p) < 1 ||
        std::stoi(p) > 65535)
      return make_problem("'" + text + "' is not a station address: write it as 192.168.1.20 or 192.168.1.20:" +
                          std::to_string(default_port));
    port = std::stoi(p);
  }
  if (host.empty() || host.size() > 253 || host.find_first_of(" /\\") != std::string::npos)
    return make_problem("'" + text + "' is not a station address: write it as 192.168.1.20 or 192.168.1.20:" +
                        std::to_string(default_port));
  return std::pair{host, port};
}

}  // namespace furrow
