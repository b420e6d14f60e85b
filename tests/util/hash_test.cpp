#include "hallwright/hash.h"

#include <gtest/gtest.h>

#include "test_support.h"

namespace hallwright {
namespace {

// FIPS 180-2 Appendix B.1 test vector: SHA-256("abc").
TEST(Hash, Sha256MatchesFips180TestVector) {
    EXPECT_EQ(Sha256OfString("abc"), "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
    const std::string dir = test::TempDir("hash");
    const std::string path = test::WriteFile(dir, "abc.txt", "abc");
    EXPECT_EQ(Sha256OfFile(path).value(), Sha256OfString("abc"));
    EXPECT_FALSE(Sha256OfFile(dir + "/missing").has_value());
}

}  // namespace
}  // namespace hallwright
