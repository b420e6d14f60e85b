// libFuzzer entry point: arbitrary bytes into the scene-file reader (ParseSceneToml, the
// TOML half of LoadScene; it opens no files). It must never crash, hang or trip a sanitizer.
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <string_view>

#include "scene/scene_toml.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
    hallwright::Diagnostics diag;
    const std::string_view text(reinterpret_cast<const char*>(data), size);
    auto file = hallwright::ParseSceneToml(text, "fuzz/scene.toml", diag);
    // An accepted scene holds only finite positions.
    if (file)
        for (const auto& s : file->scene.sources)
            if (!s.position.allFinite()) __builtin_trap();
    return 0;
}
