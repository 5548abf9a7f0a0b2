#include "storage/sealed_blob.h"

#include <openssl/crypto.h>
#include <openssl/err.h>
#include <openssl/evp.h>
#include <string.h>
#include <zstd.h>

#include <vector>

namespace unseen {
namespace {

// Layout (docs/sealed-format.md): magic | version | cipher | compression |
// nonce | ciphertext | tag. The GCM AAD is the 11 header bytes then the
// caller's aad.
constexpr char kMagic[8] = {'U', 'N', 'S', 'E', 'E', 'N', 'S', 'B'};
constexpr size_t kHeaderSize = sizeof(kMagic) + 3;
constexpr size_t kNonceOffset = kHeaderSize;
constexpr size_t kCiphertextOffset = kNonceOffset + kGcmIvSize;
constexpr size_t kMinBlobSize = kCiphertextOffset + kGcmTagSize;  // 39
constexpr int kZstdLevel = 3;

std::string Header() {
  std::string h(kMagic, sizeof(kMagic));
  h.push_back(static_cast<char>(kSealedFormatVersion));
  h.push_back(static_cast<char>(kSealedCipherAes256Gcm));
  h.push_back(static_cast<char>(kSealedCompressionZstd));
  return h;
}

std::string OpensslErrors() {
  unsigned long e = ERR_get_error();
  ERR_clear_error();
  if (e == 0) return "no OpenSSL error queued";
  char buf[256];
  ERR_error_string_n(e, buf, sizeof(buf));
  return buf;
}

// Decompresses one complete zstd frame that fills all of `in`.
Result<std::string> Decompress(std::string_view in) {
  std::unique_ptr<ZSTD_DCtx, size_t (*)(ZSTD_DCtx*)> dctx(ZSTD_createDCtx(), ZSTD_freeDCtx);
  if (!dctx) return Status::Internal("zstd: cannot create a decompression context");
  std::string out;
  std::vector<char> buf(ZSTD_DStreamOutSize());
  ZSTD_inBuffer src = {in.data(), in.size(), 0};
  size_t ret = 1;
  while (src.pos < src.size) {
    ZSTD_outBuffer dst = {buf.data(), buf.size(), 0};
    ret = ZSTD_decompressStream(dctx.get(), &dst, &src);
    if (ZSTD_isError(ret)) {
      return Status::Corruption(std::string("sealed blob: zstd: ") + ZSTD_getErrorName(ret));
    }
    out.append(buf.data(), dst.pos);
    if (ret == 0 && src.pos < src.size) {
      return Status::Corruption("sealed blob: " + std::to_string(src.size - src.pos) +
                                " bytes follow the compressed stream");
    }
  }
  // Drain output zstd still holds once all input is consumed.
  while (ret != 0) {
    ZSTD_outBuffer dst = {buf.data(), buf.size(), 0};
    ret = ZSTD_decompressStream(dctx.get(), &dst, &src);
    if (ZSTD_isError(ret)) {
      return Status::Corruption(std::string("sealed blob: zstd: ") + ZSTD_getErrorName(ret));
    }
    out.append(buf.data(), dst.pos);
    if (dst.pos == 0 && ret != 0)
      return Status::Corruption("sealed blob: compressed stream is truncated");
  }
  return out;
}

}  // namespace

struct SealedWriter::Impl {
  ~Impl() {
    ZSTD_freeCCtx(zstd);
    EVP_CIPHER_CTX_free(cipher);
  }
  // Encrypts the first `n` bytes of zbuf onto the blob.
  Status EncryptCompressed(size_t n);
  // Runs zstd over `in` with `mode` until it has taken all input (and, for
  // ZSTD_e_end, flushed everything), encrypting what comes out.
  Status Pump(std::string_view in, ZSTD_EndDirective mode);

  ZSTD_CCtx* zstd = nullptr;
  EVP_CIPHER_CTX* cipher = nullptr;
  std::vector<char> zbuf;
  std::string blob;  // header | nonce | ciphertext so far
  bool finished = false;
  Status error;  // the first failure; sticky
};

Status SealedWriter::Impl::EncryptCompressed(size_t n) {
  if (n == 0) return Status::OK();
  size_t base = blob.size();
  blob.resize(base + n);
  int outl = 0;
  if (EVP_EncryptUpdate(cipher, reinterpret_cast<unsigned char*>(&blob[base]), &outl,
                        reinterpret_cast<const unsigned char*>(zbuf.data()),
                        static_cast<int>(n)) != 1 ||
      static_cast<size_t>(outl) != n) {
    return Status::Internal("sealed blob: AES-256-GCM encryption failed: " + OpensslErrors());
  }
  return Status::OK();
}

Status SealedWriter::Impl::Pump(std::string_view in, ZSTD_EndDirective mode) {
  ZSTD_inBuffer src = {in.data(), in.size(), 0};
  for (;;) {
    ZSTD_outBuffer dst = {zbuf.data(), zbuf.size(), 0};
    size_t remaining = ZSTD_compressStream2(zstd, &dst, &src, mode);
    if (ZSTD_isError(remaining)) {
      return Status::Internal(std::string("sealed blob: zstd: ") + ZSTD_getErrorName(remaining));
    }
    UNSEEN_RETURN_IF_ERROR(EncryptCompressed(dst.pos));
    bool done = mode == ZSTD_e_end ? remaining == 0 : src.pos == src.size;
    if (done) return Status::OK();
  }
}

SealedWriter::SealedWriter(std::unique_ptr<Impl> impl) : impl_(std::move(impl)) {}
SealedWriter::~SealedWriter() = default;

Result<std::unique_ptr<SealedWriter>> SealedWriter::Create(const Key& key, std::string aad) {
  UNSEEN_ASSIGN_OR_RETURN(std::string nonce, RandomBytes(kGcmIvSize));
  auto impl = std::make_unique<Impl>();
  impl->zstd = ZSTD_createCCtx();
  if (impl->zstd == nullptr ||
      ZSTD_isError(ZSTD_CCtx_setParameter(impl->zstd, ZSTD_c_compressionLevel, kZstdLevel))) {
    return Status::Internal("sealed blob: cannot set up zstd");
  }
  impl->zbuf.resize(ZSTD_CStreamOutSize());
  impl->blob = Header();
  const std::string full_aad = impl->blob + aad;  // header bytes, then the caller's aad
  impl->blob += nonce;

  impl->cipher = EVP_CIPHER_CTX_new();
  int outl = 0;
  if (impl->cipher == nullptr ||
      EVP_EncryptInit_ex2(impl->cipher, EVP_aes_256_gcm(), key.data(),
                          reinterpret_cast<const unsigned char*>(nonce.data()), nullptr) != 1 ||
      (!full_aad.empty() &&
       EVP_EncryptUpdate(impl->cipher, nullptr, &outl,
                         reinterpret_cast<const unsigned char*>(full_aad.data()),
                         static_cast<int>(full_aad.size())) != 1)) {
    return Status::Internal("sealed blob: cannot set up AES-256-GCM: " + OpensslErrors());
  }
  return std::unique_ptr<SealedWriter>(new SealedWriter(std::move(impl)));
}

Status SealedWriter::Append(std::string_view plaintext) {
  if (!impl_->error.ok()) return impl_->error;
  if (impl_->finished) return Status::FailedPrecondition("sealed blob: Append() after Finish()");
  if (plaintext.empty()) return Status::OK();
  impl_->error = impl_->Pump(plaintext, ZSTD_e_continue);
  return impl_->error;
}

Result<std::string> SealedWriter::Finish() {
  if (!impl_->error.ok()) return impl_->error;
  if (impl_->finished) return Status::FailedPrecondition("sealed blob: Finish() called twice");
  impl_->finished = true;
  impl_->error = impl_->Pump({}, ZSTD_e_end);
  if (!impl_->error.ok()) return impl_->error;
  unsigned char tag[kGcmTagSize];
  int outl = 0;
  if (EVP_EncryptFinal_ex(impl_->cipher, nullptr, &outl) != 1 ||
      EVP_CIPHER_CTX_ctrl(impl_->cipher, EVP_CTRL_GCM_GET_TAG, sizeof(tag), tag) != 1) {
    impl_->error = Status::Internal("sealed blob: AES-256-GCM finish failed: " + OpensslErrors());
    return impl_->error;
  }
  impl_->blob.append(reinterpret_cast<const char*>(tag), sizeof(tag));
  OPENSSL_cleanse(impl_->zbuf.data(), impl_->zbuf.size());
  return std::move(impl_->blob);
}

Result<std::string> OpenSealed(const Key& key, std::string_view aad, std::string_view blob) {
  if (blob.size() < kMinBlobSize) {
    return Status::Corruption("sealed blob: truncated: " + std::to_string(blob.size()) +
                              " bytes, fewer than the 39 of header, nonce and tag");
  }
  if (memcmp(blob.data(), kMagic, sizeof(kMagic)) != 0) {
    return Status::Corruption("sealed blob: bad magic; expected \"UNSEENSB\"");
  }
  auto byte = [&](size_t i) { return static_cast<uint8_t>(blob[i]); };
  if (byte(8) != kSealedFormatVersion) {
    return Status::Corruption("sealed blob: unsupported format version " + std::to_string(byte(8)) +
                              "; this build reads version 1");
  }
  if (byte(9) != kSealedCipherAes256Gcm) {
    return Status::Corruption("sealed blob: unknown cipher id " + std::to_string(byte(9)));
  }
  if (byte(10) != kSealedCompressionZstd) {
    return Status::Corruption("sealed blob: unknown compression id " + std::to_string(byte(10)));
  }
  std::string full_aad(blob.substr(0, kHeaderSize));
  full_aad.append(aad.data(), aad.size());
  std::string_view nonce = blob.substr(kNonceOffset, kGcmIvSize);
  std::string_view ciphertext =
      blob.substr(kCiphertextOffset, blob.size() - kCiphertextOffset - kGcmTagSize);
  std::string_view tag = blob.substr(blob.size() - kGcmTagSize);
  auto compressed = AesGcmDecrypt(key, nonce, full_aad, ciphertext, tag);
  if (!compressed.ok()) {
    if (!compressed.status().IsWrongKey()) return compressed.status();
    return Status::WrongKey(
        "sealed blob: authentication failed: the key or the associated data is wrong, or the "
        "blob was altered or truncated");
  }
  auto plaintext = Decompress(*compressed);
  OPENSSL_cleanse(&(*compressed)[0], compressed->size());
  return plaintext;
}

}  // namespace unseen
