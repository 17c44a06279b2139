// The sync channel (storage/secure_channel.h) between two ends in this
// process, over an in-memory wire the test can tamper with: both sides
// derive the same session hash; messages pass both ways; a byte changed, a
// message replayed from another connection, or two messages swapped do not
// open. The primitives are libsodium's (crypto_kx,
// crypto_secretstream_xchacha20poly1305); these checks are of our framing and
// of how we use them.

#include <doctest/doctest.h>

#include <condition_variable>
#include <deque>
#include <mutex>
#include <optional>
#include <thread>

#include "storage/secure_channel.h"

namespace furrow {
namespace {

// Bytes in one direction, readable by the test before they are delivered.
struct Wire {
  std::mutex m;
  std::condition_variable cv;
  std::string bytes;
  bool closed = false;
};

class End : public ByteStream {
 public:
  End(Wire& in, Wire& out) : in_(in), out_(out) {}
  Status write_all(std::string_view b) override {
    std::lock_guard<std::mutex> l(out_.m);
    out_.bytes += b;
    out_.cv.notify_all();
    return ok_status();
  }
  Result<std::string> read_exact(size_t n) override {
    std::unique_lock<std::mutex> l(in_.m);
    in_.cv.wait(l, [&] { return in_.bytes.size() >= n || in_.closed; });
    if (in_.bytes.size() < n) return make_problem("the connection was closed by the other side");
    std::string out = in_.bytes.substr(0, n);
    in_.bytes.erase(0, n);
    return out;
  }

 private:
  Wire& in_;
  Wire& out_;
};

struct Connection {
  Wire to_server, to_client;
  End client_end{to_client, to_server}, server_end{to_server, to_client};
  std::optional<Result<SecureChannel>> client, server;
  Connection() {
    std::thread s([&] { server.emplace(SecureChannel::as_server(server_end)); });
    client.emplace(SecureChannel::as_client(client_end));
    s.join();
    REQUIRE(client->ok());
    REQUIRE(server->ok());
  }
  SecureChannel& c() { return client->value(); }
  SecureChannel& s() { return server->value(); }
  // The frames the client sent that the server has not read yet, taken off the wire.
  std::string take_pending() {
    std::lock_guard<std::mutex> l(to_server.m);
    std::string b = std::move(to_server.bytes);
    to_server.bytes.clear();
    return b;
  }
  void put(const std::string& b) {
    std::lock_guard<std::mutex> l(to_server.m);
    to_server.bytes += b;
    to_server.cv.notify_all();
  }
};

TEST_CASE("both ends agree on the session hash and messages pass both ways, in order") {
  Connection k;
  CHECK(k.c().session_hash().size() == 32);
  CHECK(k.c().session_hash() == k.s().session_hash());
  REQUIRE(k.c().send("hello station").ok());
  REQUIRE(k.c().send(std::string(100000, 'x')).ok());
  CHECK(*k.s().receive() == "hello station");
  CHECK(k.s().receive()->size() == 100000);
  REQUIRE(k.s().send("welcome").ok());
  CHECK(*k.c().receive() == "welcome");
  // Another connection has another session hash (fresh keys each time).
  Connection other;
  CHECK(other.c().session_hash() != k.c().session_hash());
  // What travels is not the text.
  REQUIRE(other.c().send("plot 101 height 96").ok());
  CHECK(other.take_pending().find("plot 101") == std::string::npos);
}

TEST_CASE("a changed byte, a replayed message and a swapped pair do not open") {
  SUBCASE("one byte changed in transit, anywhere in the frame") {
    for (size_t at : {size_t{5}, size_t{20}, size_t{30}}) {
      Connection k;
      REQUIRE(k.c().send("40 values of plot 101").ok());
      std::string frame = k.take_pending();
      REQUIRE(frame.size() > at);
      frame[at] = static_cast<char>(frame[at] ^ 0x40);
      k.put(frame);
      auto got = k.s().receive();
      REQUIRE_FALSE(got.ok());
      CHECK(got.problem().message.find("did not open") != std::string::npos);
    }
  }
  SUBCASE("a message replayed from an earlier connection") {
    Connection first;
    REQUIRE(first.c().send("40 values").ok());
    const std::string recorded = first.take_pending();
    Connection second;
    second.put(recorded);
    auto replayed = second.s().receive();
    REQUIRE_FALSE(replayed.ok());
    CHECK(replayed.problem().message.find("did not open") != std::string::npos);
  }
  SUBCASE("a message replayed within its own connection, or two swapped") {
    Connection k;
    REQUIRE(k.c().send("first").ok());
    const std::string one = k.take_pending();
    REQUIRE(k.c().send("second").ok());
    const std::string two = k.take_pending();
    k.put(two);
    CHECK_FALSE(k.s().receive().ok());
    Connection again;
    REQUIRE(again.c().send("first").ok());
    const std::string a1 = again.take_pending();
    again.put(a1);
    CHECK(*again.s().receive() == "first");
    again.put(a1);   // the same frame once more
    CHECK_FALSE(again.s().receive().ok());
    (void)one;
  }
  SUBCASE("an impossible length is refused before anything is read") {
    Connection k;
    k.put(std::string("\xff\xff\xff\xff", 4));
    auto got = k.s().receive();
    REQUIRE_FALSE(got.ok());
    CHECK(got.problem().message.find("impossible length") != std::string::npos);
  }
}

TEST_CASE("a peer that is not a Furrow sync is refused at once") {
  Wire in, out;
  End server_end(in, out);
  {
    std::lock_guard<std::mutex> l(in.m);
    in.bytes = "GET / HTTP/1.1\r\nHost: x\r\n\r\n" + std::string(20, ' ');
  }
  auto s = SecureChannel::as_server(server_end);
  REQUIRE_FALSE(s.ok());
  CHECK(s.problem().message.find("does not speak Furrow's sync") != std::string::npos);
}

}  // namespace
}  // namespace furrow
