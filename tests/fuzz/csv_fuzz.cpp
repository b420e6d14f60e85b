// libFuzzer entry point: arbitrary bytes into the materials-table reader (ParseMaterialTable).
// It must never crash, hang or trip a sanitizer.
#include <cstddef>
#include <cstdint>
#include <string>

#include "hallwright/material.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
    hallwright::Diagnostics diag;
    const std::string text(reinterpret_cast<const char*>(data), size);
    hallwright::MaterialTable table = hallwright::ParseMaterialTable(text, "fuzz.csv", diag);
    // Every accepted coefficient lies within [0, 1].
    for (const auto& m : table.materials)
        if (!(m.absorption.minCoeff() >= 0 && m.absorption.maxCoeff() <= 1 && m.scattering.minCoeff() >= 0 &&
              m.scattering.maxCoeff() <= 1))
            __builtin_trap();
    return 0;
}
