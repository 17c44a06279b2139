#include "storage/secure_channel.h"

#include <sodium.h>

#include <algorithm>
#include <cstring>

namespace furrow {

namespace {
constexpr char kMagic[] = "FRWSYNC1";
constexpr size_t kMagicBytes = 8;
}  // namespace

struct SecureChannel::State {
  crypto_secretstream_xchacha20poly1305_state push{}, pull{};
};

SecureChannel::SecureChannel(ByteStream& stream, std::unique_ptr<State> state, std::string session_hash)
    : stream_(&stream), state_(std::move(state)), session_hash_(std::move(session_hash)) {}
SecureChannel::SecureChannel(SecureChannel&&) noexcept = default;
SecureChannel& SecureChannel::operator=(SecureChannel&&) noexcept = default;
SecureChannel::~SecureChannel() {
  if (state_) sodium_memzero(state_.get(), sizeof(State));
}

Result<SecureChannel> SecureChannel::as_client(ByteStream& stream) { return handshake(stream, true); }
Result<SecureChannel> SecureChannel::as_server(ByteStream& stream) { return handshake(stream, false); }

Status SecureChannel::send(std::string_view message) {
  if (message.size() > kMaxChannelMessage) return make_problem("a message is larger than the channel allows");
  std::string frame(4 + message.size() + crypto_secretstream_xchacha20poly1305_ABYTES, '\0');
  unsigned long long len = 0;
  crypto_secretstream_xchacha20poly1305_push(&state_->push, reinterpret_cast<unsigned char*>(frame.data() + 4), &len,
                                             reinterpret_cast<const unsigned char*>(message.data()), message.size(),
                                             nullptr, 0, crypto_secretstream_xchacha20poly1305_TAG_MESSAGE);
  const std::uint32_t n = static_cast<std::uint32_t>(len);
  frame[0] = static_cast<char>(n >> 24);
  frame[1] = static_cast<char>(n >> 16);
  frame[2] = static_cast<char>(n >> 8);
  frame[3] = static_cast<char>(n);
  return stream_->write_all(frame);
}

Result<std::string> SecureChannel::receive(size_t max_bytes) {
  auto head = stream_->read_exact(4);
  if (!head) return head.problem();
  const auto* h = reinterpret_cast<const unsigned char*>(head->data());
  const std::uint32_t n = (std::uint32_t(h[0]) << 24) | (std::uint32_t(h[1]) << 16) | (std::uint32_t(h[2]) << 8) | h[3];
  if (n < crypto_secretstream_xchacha20poly1305_ABYTES ||
      n > std::min(max_bytes, kMaxChannelMessage) + crypto_secretstream_xchacha20poly1305_ABYTES)
    return make_problem("a message of impossible length " + std::to_string(n) + " (altered or not of this connection)");
  auto body = stream_->read_exact(n);
  if (!body) return body.problem();
  std::string out(n - crypto_secretstream_xchacha20poly1305_ABYTES, '\0');
  unsigned long long len = 0;
  unsigned char tag = 0;
  if (crypto_secretstream_xchacha20poly1305_pull(&state_->pull, reinterpret_cast<unsigned char*>(out.data()), &len, &tag,
                                                 reinterpret_cast<const unsigned char*>(body->data()), body->size(),
                                                 nullptr, 0) != 0)
    return make_problem("a message did not open: altered in transit, or not of this connection (a replay)");
  out.resize(len);
  return out;
}

Result<SecureChannel> SecureChannel::handshake(ByteStream& stream, bool client) {
  if (sodium_init() < 0) return make_problem("libsodium could not start");
  unsigned char pk[crypto_kx_PUBLICKEYBYTES], sk[crypto_kx_SECRETKEYBYTES];
  crypto_kx_keypair(pk, sk);
  const std::string hello = std::string(kMagic, kMagicBytes) + std::string(reinterpret_cast<char*>(pk), sizeof pk);
  if (auto w = stream.write_all(hello); !w) return w.problem();
  auto peer = stream.read_exact(hello.size());
  if (!peer) return peer.problem();
  if (peer->compare(0, kMagicBytes, kMagic, kMagicBytes) != 0)
    return make_problem("the other side does not speak Furrow's sync (is this a Furrow station?)");
  const auto* peer_pk = reinterpret_cast<const unsigned char*>(peer->data() + kMagicBytes);
  unsigned char rx[crypto_kx_SESSIONKEYBYTES], tx[crypto_kx_SESSIONKEYBYTES];
  const int kx = client ? crypto_kx_client_session_keys(rx, tx, pk, sk, peer_pk)
                        : crypto_kx_server_session_keys(rx, tx, pk, sk, peer_pk);
  sodium_memzero(sk, sizeof sk);
  if (kx != 0) return make_problem("the other side's key is not acceptable");
  // The session hash: both hellos, the client's first.
  const std::string& first = client ? hello : *peer;
  const std::string& second = client ? *peer : hello;
  unsigned char t[32];
  crypto_generichash_state hs;
  crypto_generichash_init(&hs, nullptr, 0, sizeof t);
  crypto_generichash_update(&hs, reinterpret_cast<const unsigned char*>(first.data()), first.size());
  crypto_generichash_update(&hs, reinterpret_cast<const unsigned char*>(second.data()), second.size());
  crypto_generichash_final(&hs, t, sizeof t);
  auto state = std::make_unique<SecureChannel::State>();
  unsigned char header[crypto_secretstream_xchacha20poly1305_HEADERBYTES];
  crypto_secretstream_xchacha20poly1305_init_push(&state->push, header, tx);
  sodium_memzero(tx, sizeof tx);
  if (auto w = stream.write_all(std::string_view(reinterpret_cast<char*>(header), sizeof header)); !w) return w.problem();
  auto peer_header = stream.read_exact(sizeof header);
  if (!peer_header) return peer_header.problem();
  const int pulled = crypto_secretstream_xchacha20poly1305_init_pull(
      &state->pull, reinterpret_cast<const unsigned char*>(peer_header->data()), rx);
  sodium_memzero(rx, sizeof rx);
  if (pulled != 0) return make_problem("the other side's stream header is not acceptable");
  return SecureChannel(stream, std::move(state), std::string(reinterpret_cast<char*>(t), sizeof t));
}

}  // namespace furrow
