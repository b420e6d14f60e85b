#pragma once
// The scene file (TOML) reader, private to engine/scene: the schema of allowed keys, and the
// string entry point used by LoadScene, the tests and the fuzzer.
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "hallwright/diagnostics.h"
#include "hallwright/scene.h"

namespace hallwright {

/* One section of the scene file and the keys it allows. Later issues add their sections and
   keys HERE (and read them in scene_loader.cpp); every key not listed is an error. */
struct SchemaSection {
    std::string name;            // "" = the top level
    bool arrayOfTables = false;  // [[source]], [[receiver]], [[seating]]
    std::vector<std::string> keys;
};
const std::vector<SchemaSection>& SceneSchema();

/* Everything read from the TOML alone, before the mesh and tables are opened. */
struct SceneFile {
    Scene scene;  // positions converted to the internal frame; mesh and materials still empty
    SourceLoc meshAt;
    std::vector<std::string> tablePaths;  // resolved against the scene file's folder
    std::vector<SourceLoc> tableAt;
    struct Assignment {
        std::string usemtl, material;
        SourceLoc at;
    };
    std::vector<Assignment> assign;
};

/* Parses scene TOML text; `path` names the file in messages and anchors relative paths. */
std::optional<SceneFile> ParseSceneToml(std::string_view text, const std::string& path, Diagnostics& diag);

}  // namespace hallwright
