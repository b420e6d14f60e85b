#pragma once
// The built-in materials library as CSV text (same content as engine/materials/builtin.csv).
namespace hallwright {
extern const char kBuiltinMaterialsCsv[];
extern const char kBuiltinMaterialsPath[];  // name used in messages
}  // namespace hallwright
