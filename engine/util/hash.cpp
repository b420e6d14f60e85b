#include "hallwright/hash.h"

#include <openssl/evp.h>

#include <cstdio>
#include <fstream>
#include <memory>
#include <vector>

namespace hallwright {

namespace {
std::string Hex(const unsigned char* digest, unsigned len) {
    static const char* kHex = "0123456789abcdef";
    std::string out;
    for (unsigned i = 0; i < len; ++i) {
        out += kHex[digest[i] >> 4];
        out += kHex[digest[i] & 15];
    }
    return out;
}

struct Hasher {
    std::unique_ptr<EVP_MD_CTX, decltype(&EVP_MD_CTX_free)> ctx{EVP_MD_CTX_new(), EVP_MD_CTX_free};
    Hasher() { EVP_DigestInit_ex(ctx.get(), EVP_sha256(), nullptr); }
    void Update(const void* data, size_t n) { EVP_DigestUpdate(ctx.get(), data, n); }
    std::string Final() {
        unsigned char digest[EVP_MAX_MD_SIZE];
        unsigned len = 0;
        EVP_DigestFinal_ex(ctx.get(), digest, &len);
        return Hex(digest, len);
    }
};
}  // namespace

std::optional<std::string> Sha256OfFile(const std::string& path) {
    std::ifstream in(path, std::ios::binary);
    if (!in) return std::nullopt;
    Hasher h;
    std::vector<char> buf(1 << 16);
    while (in) {
        in.read(buf.data(), static_cast<std::streamsize>(buf.size()));
        h.Update(buf.data(), static_cast<size_t>(in.gcount()));
    }
    return h.Final();
}

std::string Sha256OfString(const std::string& data) {
    Hasher h;
    h.Update(data.data(), data.size());
    return h.Final();
}

}  // namespace hallwright
