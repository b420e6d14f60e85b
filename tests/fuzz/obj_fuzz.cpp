// libFuzzer entry point: arbitrary bytes into the OBJ reader (ParseObj). It must never crash,
// hang or trip a sanitizer; errors are expected and ignored.
#include <cstddef>
#include <cstdint>
#include <string_view>

#include "scene/obj_reader.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
    hallwright::Diagnostics diag;
    const std::string_view text(reinterpret_cast<const char*>(data), size);
    hallwright::ObjModel model = hallwright::ParseObj(text, "fuzz.obj", diag);
    // Every triangle must index a vertex when the parse reports no error.
    if (!diag.HasErrors())
        for (const auto& t : model.mesh.triangles)
            for (uint32_t v : t)
                if (v >= model.mesh.vertices.size()) __builtin_trap();
    return 0;
}
