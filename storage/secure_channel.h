#pragma once
// An encrypted, authenticated channel between a device and its station,
// built from libsodium only (no cryptography of our own):
//
//   1. Each side sends 8 bytes "FRWSYNC1" and a fresh X25519 public key made
//      for this connection alone (crypto_kx_keypair).
//   2. Both derive one key per direction with crypto_kx_client_session_keys /
//      crypto_kx_server_session_keys (the device is the client).
//   3. Each direction is a libsodium secret stream
//      (crypto_secretstream_xchacha20poly1305): every message is encrypted
//      and authenticated, in order; a message changed, dropped, reordered or
//      replayed from another connection fails to open.
//   4. Who is at the other end is proved inside the stream: each side signs
//      the connection's session hash (the BLAKE2b hash of both hellos, so of
//      both fresh keys) with the Ed25519 key the other already trusts for the
//      trial (the device: its enrolled key; the station: the trial's station
//      key the device copy pinned). A signature made for one connection is
//      worthless on another, so a man in the middle who runs two key
//      exchanges cannot pass one side's proof to the other. This is the
//      sign-and-bind-to-the-key-exchange pattern of SIGMA (H. Krawczyk,
//      "SIGMA: the 'SIGn-and-MAc' approach to authenticated Diffie-Hellman",
//      CRYPTO 2003), as used by IKE; the signing is app/work/sync.h's.
//
// Frames: 4 bytes big-endian ciphertext length, then the ciphertext (the
// message and 17 bytes of libsodium's tag). Messages are at most
// kMaxChannelMessage bytes.

#include <memory>
#include <string>
#include <string_view>

#include "core/result.h"

namespace furrow {

inline constexpr size_t kMaxChannelMessage = 16u * 1024 * 1024;   // a 2,000-row bundle is about 0.2 MB
inline constexpr size_t kMaxHandshakeMessage = 64u * 1024;         // before the peer has proved who it is

// Whatever carries the bytes (a TCP stream; a pair of pipes in tests).
class ByteStream {
 public:
  virtual ~ByteStream() = default;
  virtual Status write_all(std::string_view bytes) = 0;
  virtual Result<std::string> read_exact(size_t n) = 0;
  // Every read and write from now on must finish within `seconds` in all
  // (0: no overall limit); a stream without a clock may ignore it.
  virtual void set_deadline(int seconds) { (void)seconds; }
};

class SecureChannel {
 public:
  // The handshake, as the connecting side (a device) or the accepting side
  // (the station). A Problem when the other side is not a Furrow peer or the
  // connection fails.
  static Result<SecureChannel> as_client(ByteStream& stream);
  static Result<SecureChannel> as_server(ByteStream& stream);

  SecureChannel(SecureChannel&&) noexcept;
  SecureChannel& operator=(SecureChannel&&) noexcept;
  ~SecureChannel();

  // 32 bytes naming this connection: what each side signs.
  const std::string& session_hash() const { return session_hash_; }
  Status send(std::string_view message);
  // A Problem when the connection fails or a message does not open
  // ("altered or not of this connection").
  // Messages longer than `max_bytes` are refused before they are read.
  Result<std::string> receive(size_t max_bytes = kMaxChannelMessage);

 private:
  struct State;
  static Result<SecureChannel> handshake(ByteStream& stream, bool client);
  SecureChannel(ByteStream& stream, std::unique_ptr<State> state, std::string session_hash);
  ByteStream* stream_;
  std::unique_ptr<State> state_;
  std::string session_hash_;
};

}  // namespace furrow
