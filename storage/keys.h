#pragma once
// Keys, signatures and hashes, all from libsodium (no cryptography of our
// own): Ed25519 signatures (crypto_sign_*), BLAKE2b hashes
// (crypto_generichash). Keys travel as raw bytes in std::string.

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>

namespace furrow {

inline constexpr size_t kPublicKeyBytes = 32, kSecretKeyBytes = 64, kSignatureBytes = 64;

struct KeyPair {
  std::string public_key;   // 32 bytes
  std::string secret_key;   // 64 bytes (libsodium's seed and public key)
};

// A new Ed25519 key pair from the system's random source.
KeyPair new_key_pair();

// The detached Ed25519 signature (64 bytes) of the concatenation of `parts`.
std::string sign_parts(const std::string& secret_key, std::initializer_list<std::string_view> parts);
// Whether `signature` is `public_key`'s over the concatenation of `parts`.
bool verify_parts(const std::string& public_key, std::string_view signature,
                  std::initializer_list<std::string_view> parts);

// BLAKE2b-256 of `bytes`, 64 hex digits.
std::string hash_hex(std::string_view bytes);

// Incremental BLAKE2b-256 (crypto_generichash), for digests of many fields.
class Hasher {
 public:
  Hasher();
  ~Hasher();
  Hasher(const Hasher&) = delete;
  Hasher& operator=(const Hasher&) = delete;
  void update(std::string_view bytes);
  std::string hex();   // once, at the end

 private:
  alignas(64) unsigned char state_[384];
};

// `n` bytes from the system's random source (randombytes_buf).
std::string random_bytes(size_t n);
// A uniformly random number below `upper` (randombytes_uniform).
std::uint32_t random_below(std::uint32_t upper);
// Lower-case hex of bytes, and back (nullopt when not hex).
std::string to_hex(std::string_view bytes);
std::optional<std::string> from_hex(std::string_view hex);

// A short form of a public key for people to compare by eye: the first 8
// bytes of its BLAKE2b hash as four groups of four hex digits.
std::string key_fingerprint(const std::string& public_key);

}  // namespace furrow
