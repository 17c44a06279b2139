#include "storage/keys.h"

#include <sodium.h>

#include <cstdio>
#include <stdexcept>
#include <vector>

namespace furrow {
namespace {

void ready() {
  static const int init = sodium_init();   // 0 first time, 1 when already done, -1 when it cannot run
  if (init < 0) throw std::runtime_error("libsodium cannot start (no system random source?)");
}

std::string to_hex(const unsigned char* bytes, size_t n) {
  std::string out(n * 2, '0');
  static const char* digits = "0123456789abcdef";
  for (size_t i = 0; i < n; ++i) {
    out[2 * i] = digits[bytes[i] >> 4];
    out[2 * i + 1] = digits[bytes[i] & 15];
  }
  return out;
}

static_assert(sizeof(crypto_generichash_state) <= 384, "Hasher's state is too small for crypto_generichash_state");

}  // namespace

KeyPair new_key_pair() {
  ready();
  unsigned char pk[crypto_sign_PUBLICKEYBYTES], sk[crypto_sign_SECRETKEYBYTES];
  crypto_sign_keypair(pk, sk);
  KeyPair out{std::string(reinterpret_cast<char*>(pk), sizeof pk), std::string(reinterpret_cast<char*>(sk), sizeof sk)};
  sodium_memzero(sk, sizeof sk);
  return out;
}

// Ed25519 signs the whole message (no prehash): the parts are joined once.
std::string sign_parts(const std::string& secret_key, std::initializer_list<std::string_view> parts) {
  ready();
  if (secret_key.size() != crypto_sign_SECRETKEYBYTES) throw std::invalid_argument("sign_parts: not a secret key");
  std::string message;
  size_t n = 0;
  for (auto p : parts) n += p.size();
  message.reserve(n);
  for (auto p : parts) message.append(p);
  unsigned char sig[crypto_sign_BYTES];
  crypto_sign_detached(sig, nullptr, reinterpret_cast<const unsigned char*>(message.data()), message.size(),
                       reinterpret_cast<const unsigned char*>(secret_key.data()));
  return std::string(reinterpret_cast<char*>(sig), sizeof sig);
}

bool verify_parts(const std::string& public_key, std::string_view signature,
                  std::initializer_list<std::string_view> parts) {
  ready();
  if (public_key.size() != crypto_sign_PUBLICKEYBYTES || signature.size() != crypto_sign_BYTES) return false;
  std::string message;
  size_t n = 0;
  for (auto p : parts) n += p.size();
  message.reserve(n);
  for (auto p : parts) message.append(p);
  return crypto_sign_verify_detached(reinterpret_cast<const unsigned char*>(signature.data()),
                                     reinterpret_cast<const unsigned char*>(message.data()), message.size(),
                                     reinterpret_cast<const unsigned char*>(public_key.data())) == 0;
}

std::string hash_hex(std::string_view bytes) {
  Hasher h;
  h.update(bytes);
  return h.hex();
}

Hasher::Hasher() {
  ready();
  crypto_generichash_init(reinterpret_cast<crypto_generichash_state*>(state_), nullptr, 0, 32);
}
Hasher::~Hasher() { sodium_memzero(state_, sizeof state_); }
void Hasher::update(std::string_view bytes) {
  crypto_generichash_update(reinterpret_cast<crypto_generichash_state*>(state_),
                            reinterpret_cast<const unsigned char*>(bytes.data()), bytes.size());
}
std::string Hasher::hex() {
  unsigned char out[32];
  crypto_generichash_final(reinterpret_cast<crypto_generichash_state*>(state_), out, sizeof out);
  return to_hex(out, sizeof out);
}

std::string key_fingerprint(const std::string& public_key) {
  const std::string h = hash_hex(public_key);
  return h.substr(0, 4) + "-" + h.substr(4, 4) + "-" + h.substr(8, 4) + "-" + h.substr(12, 4);
}

}  // namespace furrow

namespace furrow {

std::string random_bytes(size_t n) {
  ready();
  std::string out(n, '\0');
  randombytes_buf(out.data(), n);
  return out;
}

std::uint32_t random_below(std::uint32_t upper) {
  ready();
  return randombytes_uniform(upper);
}

std::string to_hex(std::string_view bytes) {
  return to_hex(reinterpret_cast<const unsigned char*>(bytes.data()), bytes.size());
}

std::optional<std::string> from_hex(std::string_view hex) {
  if (hex.size() % 2 != 0) return std::nullopt;
  std::string out(hex.size() / 2, '\0');
  size_t len = 0;
  if (sodium_hex2bin(reinterpret_cast<unsigned char*>(out.data()), out.size(), hex.data(), hex.size(), nullptr, &len,
                     nullptr) != 0 ||
      len != out.size())
    return std::nullopt;
  return out;
}

}  // namespace furrow
