#pragma once
// TCP on the local network (POSIX sockets): a listening socket for the
// station and connected streams with deadlines, so that a stalled peer never
// holds a thread for ever. Bytes only: the encryption is storage/secure_channel.h.

#include <cstdint>
#include <string>
#include <string_view>

#include "core/result.h"

namespace furrow {

// A connected TCP stream. Every read and write waits at most `timeout_ms`
// (set_timeout) for the peer; a closed or stalled connection is a Problem.
class TcpStream {
 public:
  TcpStream() = default;
  explicit TcpStream(int fd, std::string peer) : fd_(fd), peer_(std::move(peer)) {}
  TcpStream(TcpStream&& o) noexcept : fd_(o.fd_), peer_(std::move(o.peer_)), timeout_ms_(o.timeout_ms_) { o.fd_ = -1; }
  TcpStream& operator=(TcpStream&& o) noexcept;
  TcpStream(const TcpStream&) = delete;
  TcpStream& operator=(const TcpStream&) = delete;
  ~TcpStream();

  // Connects to host:port within `timeout_ms`.
  static Result<TcpStream> connect(const std::string& host, int port, int timeout_ms);

  Status write_all(std::string_view bytes);
  Result<std::string> read_exact(size_t n);
  void set_timeout(int ms) { timeout_ms_ = ms; }
  // Every read and write must also end by this time (milliseconds on the
  // steady clock; 0: no overall limit), however the bytes trickle in.
  void set_deadline_ms(long long steady_ms) { deadline_ms_ = steady_ms; }
  const std::string& peer() const { return peer_; }   // "192.168.1.20:51234"
  void close();
  bool is_open() const { return fd_ >= 0; }

 private:
  int fd_ = -1;
  std::string peer_;
  int timeout_ms_ = 30000;
  long long deadline_ms_ = 0;
  int wait_ms() const;   // the shorter of the timeout and what is left before the deadline (0: passed)
};

// Milliseconds on the steady clock, for deadlines.
long long steady_now_ms();

class TcpListener {
 public:
  TcpListener() = default;
  TcpListener(TcpListener&& o) noexcept : fd_(o.fd_), port_(o.port_) { o.fd_ = -1; }
  TcpListener(const TcpListener&) = delete;
  TcpListener& operator=(const TcpListener&) = delete;
  ~TcpListener();

  // Listens on `address` ("0.0.0.0" every interface, "127.0.0.1" this
  // machine only) and `port` (0: any free port; port() tells which).
  static Result<TcpListener> listen(const std::string& address, int port);
  // Waits at most `timeout_ms` for a connection: nullopt-like empty stream
  // (is_open() false) when none came.
  Result<TcpStream> accept(int timeout_ms);
  int port() const { return port_; }

 private:
  int fd_ = -1;
  int port_ = 0;
};

// This machine's IPv4 addresses other than loopback ("192.168.1.20"), for
// the station to show; empty when it has none.
std::string local_addresses();

// "host:port" -> host and port; a Problem in words when it is not one.
Result<std::pair<std::string, int>> parse_host_port(const std::string& text, int default_port);

}  // namespace furrow
