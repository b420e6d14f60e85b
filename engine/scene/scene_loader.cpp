// Scene loading: scene.toml (toml++) -> Scene, then the OBJ model and the materials tables it
// names. All positions in the file are in the model's units and axes and are converted with
// the mesh into metres and the internal y-up frame (Scene::FromModel, scene_frame.cpp).
//
// Decisions worth knowing (documented in the README's scene section):
// - up = "z" is the rotation (x, y, z) -> (x, z, -y) (determinant +1), never an axis swap.
// - units scale the mesh AND the positions in the scene file (they are read off the same CAD
//   model); keys ending in _m (spacing_m, ear_height_m) are in metres whatever the units.
// - Faces before any `usemtl` take the material named "default" (through [materials.assign]
//   like any name); if none is defined that is an error naming the first such face.
#include <algorithm>
#include <cmath>
#include <filesystem>
#include <map>
#include <set>
#include <sstream>

#include <toml++/toml.h>

#include "hallwright/scene.h"
#include "scene/obj_reader.h"
#include "scene/scene_toml.h"
#include "scene/text_util.h"

namespace hallwright {

const std::vector<SchemaSection>& SceneSchema() {
    static const std::vector<SchemaSection> kSchema = {
        {"", false, {"title", "model", "materials", "air", "source", "receiver", "seating", "simulation", "review", "speech", "noise", "output"}},
        {"model", false, {"mesh", "units", "up"}},
        {"materials", false, {"tables", "assign"}},
        {"air", false, {"temperature_c", "humidity_pct", "pressure_kpa"}},
        {"source", true, {"name", "position"}},
        {"receiver", true, {"name", "position", "zone", "facing"}},
        {"seating", true, {"zone", "surfaces", "spacing_m", "ear_height_m", "facing"}},
        {"simulation", false, {"rays", "image_order", "duration_s", "sample_rate", "seed", "bands"}},
        {"review", false, {"venue", "flutter_max_angle_deg"}},  // design review (issue 10)
        {"speech", false, {"level_db"}},                        // STI level terms (issue 7)
        {"noise", false, {"octave_db"}},
        {"output", false, {"spatial_seats", "spatial_per_zone", "hrtf", "reflection_phase"}},  // IR files (issue 6)
    };
    return kSchema;
}

namespace {

namespace fs = std::filesystem;

// Metres per model unit, or 0 for an unknown unit (ModelUnitScale throws on those).
double UnitScale(const std::string& units) {
    for (const char* u : {"m", "cm", "mm", "in", "ft"})
        if (units == u) return ModelUnitScale(units);
    return 0.0;
}

// Typed access to the TOML tree, reporting every problem with file:line:col.
class TomlReader {
  public:
    TomlReader(const std::string& path, Diagnostics& diag) : path_(path), diag_(diag) {}

    SourceLoc At(const toml::source_region& r) const {
        return {path_, static_cast<int>(r.begin.line), static_cast<int>(r.begin.column), ""};
    }
    SourceLoc At(const toml::node& n) const { return At(n.source()); }
    void Error(const SourceLoc& at, std::string msg) { diag_.Error(at, std::move(msg)); ++errors_; }
    void Warning(const SourceLoc& at, std::string msg) { diag_.Warning(at, std::move(msg)); }
    int Errors() const { return errors_; }
    const std::string& Path() const { return path_; }

    // Unknown keys (with a did-you-mean) and wrong section shapes, from the schema.
    void CheckKeys(const toml::table& t, const SchemaSection& section, const std::string& where) {
        for (auto&& [key, node] : t) {
            const std::string k(key.str());
            if (std::find(section.keys.begin(), section.keys.end(), k) != section.keys.end()) continue;
            std::string allowed = text::JoinList(section.keys, 20);
            Error(At(key.source()), "unknown key '" + k + "' in " + where + text::DidYouMean(k, section.keys) +
                                        "; allowed: " + allowed);
        }
    }

    const toml::node* Find(const toml::table& t, std::string_view key) const { return t.get(key); }

    std::optional<std::string> String(const toml::table& t, std::string_view key, const std::string& where) {
        const toml::node* n = Find(t, key);
        if (!n) return std::nullopt;
        if (auto s = n->as_string()) return s->get();
        Error(At(*n), std::string(key) + " in " + where + " must be a string in quotes, e.g. " + std::string(key) +
                          " = \"...\"");
        return std::nullopt;
    }

    std::optional<double> Number(const toml::table& t, std::string_view key, const std::string& where) {
        const toml::node* n = Find(t, key);
        if (!n) return std::nullopt;
        if (auto i = n->as_integer()) return static_cast<double>(i->get());
        if (auto f = n->as_floating_point()) {
            if (std::isfinite(f->get())) return f->get();
            Error(At(*n), std::string(key) + " in " + where + " is not a finite number; give a number");
            return std::nullopt;
        }
        Error(At(*n), std::string(key) + " in " + where + " must be a number");
        return std::nullopt;
    }

    // A whole number (an integral float such as 1e5 is accepted).
    std::optional<long long> Integer(const toml::table& t, std::string_view key, const std::string& where) {
        const toml::node* n = Find(t, key);
        if (!n) return std::nullopt;
        if (auto i = n->as_integer()) return i->get();
        if (auto f = n->as_floating_point()) {
            const double v = f->get();
            if (std::isfinite(v) && v == std::floor(v) && std::abs(v) < 9e18) return static_cast<long long>(v);
        }
        Error(At(*n), std::string(key) + " in " + where + " must be a whole number");
        return std::nullopt;
    }

    // A 3-vector [x, y, z] of finite numbers.
    std::optional<Vec3> Vector(const toml::node& n, const std::string& what) {
        const toml::array* a = n.as_array();
        if (!a || a->size() != 3) {
            Error(At(n), what + " must be three numbers [x, y, z]");
            return std::nullopt;
        }
        Vec3 v;
        for (size_t k = 0; k < 3; ++k) {
            const toml::node& e = *a->get(k);
            if (auto i = e.as_integer()) {
                v[k] = static_cast<double>(i->get());
            } else if (auto f = e.as_floating_point(); f && std::isfinite(f->get())) {
                v[k] = f->get();
            } else {
                Error(At(e), what + ": component " + std::to_string(k + 1) + " is not a finite number");
                return std::nullopt;
            }
        }
        return v;
    }

  private:
    std::string path_;
    Diagnostics& diag_;
    int errors_ = 0;
};

const SchemaSection& Section(const std::string& name) {
    for (const auto& s : SceneSchema())
        if (s.name == name) return s;
    HW_CHECK(false, "no schema section " + name);
}

// Range check helper: reports "key in where is V; it must ..." at the key's value.
bool InRange(TomlReader& r, const toml::table& t, std::string_view key, const std::string& where, double v,
             double lo, double hi, const std::string& rule) {
    if (v >= lo && v <= hi) return true;
    std::ostringstream os;
    os << key << " in " << where << " is " << v << "; " << rule;
    r.Error(r.At(*t.get(key)), os.str());
    return false;
}

std::string ResolvePath(const std::string& scenePath, const std::string& rel) {
    fs::path p(rel);
    if (p.is_absolute()) return p.lexically_normal().string();
    return (fs::path(scenePath).parent_path() / p).lexically_normal().string();
}

}  // namespace

std::optional<SceneFile> ParseSceneToml(std::string_view text, const std::string& path, Diagnostics& diag) {
    TomlReader r(path, diag);
    if (size_t nul = text::FindNulByte(text); nul != std::string_view::npos) {
        diag.Error({path, 0, 0, ""}, "scene file is binary (NUL byte at offset " + std::to_string(nul) +
                                         "); it must be a TOML text file");
        return std::nullopt;
    }
    if (text::Trim(text).empty()) {
        diag.Error({path, 0, 0, ""}, "scene file is empty; it needs at least [model] mesh = \"...\", one "
                                     "[[source]] and one [[receiver]] or [[seating]]");
        return std::nullopt;
    }
    toml::table root;
    try {
        root = toml::parse(text, path);
    } catch (const toml::parse_error& e) {
        diag.Error(r.At(e.source()), "TOML syntax: " + std::string(e.description()));
        return std::nullopt;
    }

    SceneFile out;
    Scene& scene = out.scene;
    scene.scenePath = path;
    scene.title = fs::path(path).stem().string();

    // Top level and section shapes.
    r.CheckKeys(root, Section(""), "the scene file (top level)");
    auto table = [&](const std::string& name) -> const toml::table* {
        const toml::node* n = root.get(name);
        if (!n) return nullptr;
        if (auto t = n->as_table()) {
            r.CheckKeys(*t, Section(name), "[" + name + "]");
            return t;
        }
        r.Error(r.At(*n), "'" + name + "' must be a section: write [" + name + "] on its own line");
        return nullptr;
    };
    auto tableArray = [&](const std::string& name) {
        std::vector<const toml::table*> items;
        const toml::node* n = root.get(name);
        if (!n) return items;
        const toml::array* a = n->as_array();
        if (!a || !a->is_array_of_tables()) {
            r.Error(r.At(*n), "'" + name + "' must be written as [[" + name + "]] blocks (double brackets), one per " + name);
            return items;
        }
        for (size_t i = 0; i < a->size(); ++i) {
            const toml::table* t = a->get(i)->as_table();
            r.CheckKeys(*t, Section(name), "[[" + name + "]]");
            items.push_back(t);
        }
        return items;
    };
    if (auto t = r.String(root, "title", "the scene file")) scene.title = *t;

    // [model]
    const toml::table* model = table("model");
    if (!model) {
        if (!root.get("model"))
            r.Error({path, 1, 1, ""}, "missing [model] section; add [model] with mesh = \"hall.obj\"");
    } else {
        if (auto mesh = r.String(*model, "mesh", "[model]")) {
            if (mesh->empty()) {
                r.Error(r.At(*model->get("mesh")), "mesh in [model] is empty; give the OBJ file's path");
            } else {
                scene.meshPath = ResolvePath(path, *mesh);
                out.meshAt = r.At(*model->get("mesh"));
            }
        } else if (!model->get("mesh")) {
            r.Error(r.At(*model), "[model] has no mesh; add mesh = \"hall.obj\" (relative to this file)");
        }
        if (auto u = r.String(*model, "units", "[model]")) {
            if (UnitScale(*u) == 0)
                r.Error(r.At(*model->get("units")), "units in [model] is \"" + *u + "\"" +
                                                        text::DidYouMean(*u, {"m", "cm", "mm", "in", "ft"}) +
                                                        "; use one of m, cm, mm, in, ft");
            else
                scene.modelUnits = *u;
        }
        if (auto u = r.String(*model, "up", "[model]")) {
            if (*u != "y" && *u != "z")
                r.Error(r.At(*model->get("up")), "up in [model] is \"" + *u + "\"; use \"y\" or \"z\" (the model's vertical axis)");
            else
                scene.modelUp = *u;
        }
    }

    // [materials]
    if (const toml::table* mats = table("materials")) {
        if (const toml::node* n = mats->get("tables")) {
            const toml::array* a = n->as_array();
            if (auto s = n->as_string()) {
                out.tablePaths.push_back(ResolvePath(path, s->get()));
                out.tableAt.push_back(r.At(*n));
            } else if (!a) {
                r.Error(r.At(*n), "tables in [materials] must be a list of file names, e.g. tables = [\"materials.csv\"]");
            } else {
                for (size_t i = 0; i < a->size(); ++i) {
                    const toml::node& e = *a->get(i);
                    if (auto s = e.as_string(); s && !s->get().empty()) {
                        out.tablePaths.push_back(ResolvePath(path, s->get()));
                        out.tableAt.push_back(r.At(e));
                    } else {
                        r.Error(r.At(e), "each entry of tables in [materials] must be a file name in quotes");
                    }
                }
            }
        }
        if (const toml::node* n = mats->get("assign")) {
            if (const toml::table* a = n->as_table()) {
                for (auto&& [key, value] : *a) {
                    if (auto s = value.as_string())
                        out.assign.push_back({std::string(key.str()), s->get(), r.At(key.source())});
                    else
                        r.Error(r.At(value), "[materials.assign] maps an OBJ usemtl name to a material name: write " +
                                                 std::string(key.str()) + " = \"material_name\"");
                }
            } else {
                r.Error(r.At(*n), "assign in [materials] must be a table: write [materials.assign] and then "
                                  "usemtl_name = \"material_name\" lines");
            }
        }
    }

    // [air]
    if (const toml::table* air = table("air")) {
        // Ranges from memory of ISO 9613-1:1993's stated validity (-20..50 degC, 10..100 %RH).
        if (auto v = r.Number(*air, "temperature_c", "[air]"))
            if (InRange(r, *air, "temperature_c", "[air]", *v, -20, 50, "ISO 9613-1 air absorption holds for -20..50 degC"))
                scene.air.temperatureC = *v;
        if (auto v = r.Number(*air, "humidity_pct", "[air]"))
            if (InRange(r, *air, "humidity_pct", "[air]", *v, 10, 100, "relative humidity must be 10..100 % (ISO 9613-1)"))
                scene.air.humidityPct = *v;
        if (auto v = r.Number(*air, "pressure_kpa", "[air]"))
            if (InRange(r, *air, "pressure_kpa", "[air]", *v, 50, 200, "give the ambient pressure in kPa (sea level: 101.325)"))
                scene.air.pressureKPa = *v;
    }

    // [[source]]
    std::map<std::string, SourceLoc> sourceAt;
    const auto sourceTables = tableArray("source");
    for (size_t i = 0; i < sourceTables.size(); ++i) {
        const toml::table& t = *sourceTables[i];
        const std::string where = "[[source]] #" + std::to_string(i + 1);
        Source s;
        s.definedAt = r.At(t);
        s.name = "S" + std::to_string(i + 1);
        if (auto name = r.String(t, "name", where)) {
            if (name->empty())
                r.Error(r.At(*t.get("name")), "source name is empty; give it a name or leave the key out");
            else
                s.name = *name;
            s.definedAt = r.At(*t.get("name"));
        }
        if (auto it = sourceAt.find(s.name); it != sourceAt.end()) {
            r.Error(s.definedAt, "source name '" + s.name + "' is used twice (first at line " +
                                     std::to_string(it->second.line) + "); give each source its own name");
            continue;
        }
        sourceAt[s.name] = s.definedAt;
        const toml::node* pos = t.get("position");
        if (!pos) {
            r.Error(s.definedAt, "source '" + s.name + "' has no position; add position = [x, y, z] in model units and axes");
            continue;
        }
        auto p = r.Vector(*pos, "position of source '" + s.name + "'");
        if (!p) continue;
        s.position = scene.FromModel(*p);
        scene.sources.push_back(s);
    }
    if (sourceTables.empty() && !root.get("source"))
        r.Error({path, 1, 1, ""}, "no source; add a [[source]] block with name and position = [x, y, z]");
    std::vector<std::string> sourceNames;
    for (const auto& s : scene.sources) sourceNames.push_back(s.name);

    // Facing: a source name, or a direction [x, y, z] in model axes.
    struct Facing {
        std::string source;
        std::optional<Vec3> direction;
        bool ok = true;
    };
    auto readFacing = [&](const toml::table& t, const std::string& who) {
        Facing f;
        const toml::node* n = t.get("facing");
        if (!n) return f;
        if (auto s = n->as_string()) {
            f.source = s->get();
            if (std::find(sourceNames.begin(), sourceNames.end(), f.source) == sourceNames.end()) {
                r.Error(r.At(*n), "facing of " + who + " names source '" + f.source + "', which is not defined" +
                                      text::DidYouMean(f.source, sourceNames) + "; sources: " + text::JoinList(sourceNames));
                f.ok = false;
            }
            return f;
        }
        if (n->as_array()) {
            if (auto d = r.Vector(*n, "facing of " + who)) {
                if (d->norm() == 0) {
                    r.Error(r.At(*n), "facing of " + who + " is the zero vector; give a direction or a source name");
                    f.ok = false;
                } else {
                    f.direction = scene.DirectionFromModel(d->normalized());
                }
            } else {
                f.ok = false;
            }
            return f;
        }
        r.Error(r.At(*n), "facing of " + who + " must be a source name in quotes or a direction [x, y, z]");
        f.ok = false;
        return f;
    };

    // [[receiver]]
    std::map<std::string, SourceLoc> receiverAt;
    const auto receiverTables = tableArray("receiver");
    for (size_t i = 0; i < receiverTables.size(); ++i) {
        const toml::table& t = *receiverTables[i];
        const std::string where = "[[receiver]] #" + std::to_string(i + 1);
        Receiver rc;
        rc.definedAt = r.At(t);
        rc.name = "R" + std::to_string(i + 1);
        if (auto name = r.String(t, "name", where)) {
            if (name->empty())
                r.Error(r.At(*t.get("name")), "receiver name is empty; give it a name or leave the key out");
            else
                rc.name = *name;
            rc.definedAt = r.At(*t.get("name"));
        }
        if (auto it = receiverAt.find(rc.name); it != receiverAt.end()) {
            r.Error(rc.definedAt, "receiver name '" + rc.name + "' is used twice (first at line " +
                                      std::to_string(it->second.line) + "); give each receiver its own name");
            continue;
        }
        receiverAt[rc.name] = rc.definedAt;
        if (auto z = r.String(t, "zone", where)) rc.zone = *z;
        const toml::node* pos = t.get("position");
        if (!pos) {
            r.Error(rc.definedAt, "receiver '" + rc.name + "' has no position; add position = [x, y, z] in model units and axes");
            continue;
        }
        auto p = r.Vector(*pos, "position of receiver '" + rc.name + "'");
        if (!p) continue;
        rc.position = scene.FromModel(*p);
        Facing f = readFacing(t, "receiver '" + rc.name + "'");
        if (!f.ok) continue;
        if (f.direction) {
            rc.facing = *f.direction;
        } else if (!scene.sources.empty()) {
            const Source* src = &scene.sources.front();
            for (const auto& s : scene.sources)
                if (s.name == f.source) src = &s;
            rc.facingSource = src->name;
            const Vec3 toSource = src->position - rc.position;
            if (toSource.norm() < 1e-9) {
                r.Error(rc.definedAt, "receiver '" + rc.name + "' is at the position of source '" + src->name +
                                          "'; move it away from the source");
                continue;
            }
            rc.facing = toSource.normalized();
        }
        scene.receivers.push_back(rc);
    }

    // [[seating]]
    std::map<std::string, SourceLoc> zoneAt;
    const auto seatingTables = tableArray("seating");
    for (size_t i = 0; i < seatingTables.size(); ++i) {
        const toml::table& t = *seatingTables[i];
        const std::string where = "[[seating]] #" + std::to_string(i + 1);
        SeatingBlock b;
        b.definedAt = r.At(t);
        b.zone = "seating" + std::to_string(i + 1);
        bool ok = true;
        if (auto z = r.String(t, "zone", where)) {
            if (z->empty()) {
                r.Error(r.At(*t.get("zone")), "zone of " + where + " is empty; give it a name or leave the key out");
                ok = false;
            } else {
                b.zone = *z;
            }
            b.definedAt = r.At(*t.get("zone"));
        }
        if (auto it = zoneAt.find(b.zone); it != zoneAt.end()) {
            r.Error(b.definedAt, "seating zone '" + b.zone + "' is used by two [[seating]] blocks (first at line " +
                                     std::to_string(it->second.line) + "); list all its surfaces in one block or rename one");
            continue;
        }
        zoneAt[b.zone] = b.definedAt;
        const toml::node* surf = t.get("surfaces");
        if (!surf) {
            r.Error(b.definedAt, "[[seating]] '" + b.zone + "' has no surfaces; add surfaces = [\"group_name\"] "
                                 "naming the OBJ groups (g/o) of the seating floor");
            ok = false;
        } else if (auto s = surf->as_string()) {
            b.surfaces.push_back(s->get());
        } else if (auto a = surf->as_array(); a && a->size() > 0) {
            for (size_t k = 0; k < a->size(); ++k) {
                if (auto s = a->get(k)->as_string())
                    b.surfaces.push_back(s->get());
                else {
                    r.Error(r.At(*a->get(k)), "each entry of surfaces must be an OBJ group name in quotes");
                    ok = false;
                }
            }
        } else {
            r.Error(r.At(*surf), "surfaces must be a non-empty list of OBJ group names, e.g. [\"stalls_floor\"]");
            ok = false;
        }
        // Keys ending in _m are metres, whatever the model units.
        if (auto v = r.Number(t, "spacing_m", where)) {
            b.spacingM = *v;
            // A seat grid finer than 0.3 m is no seating plan; usually the units are wrong
            // (common practice, no source).
            if (!(b.spacingM >= 0.3 && b.spacingM <= 50)) {
                std::ostringstream os;
                os << "spacing_m in " << where << " is " << *v
                   << " m; seat spacing must be 0.3..50 m (spacing_m is in metres, whatever the model units)";
                r.Error(r.At(*t.get("spacing_m")), os.str());
                ok = false;
            }
        } else if (t.get("spacing_m")) {
            ok = false;
        } else {
            b.spacingM = 1.0;  // documented default: 1 m, whatever the model units
        }
        if (auto v = r.Number(t, "ear_height_m", where)) {
            b.earHeightM = *v;
            if (!(b.earHeightM >= 0.1 && b.earHeightM <= 3.0)) {
                std::ostringstream os;
                os << "ear_height_m in " << where << " is " << *v
                   << " m; ears are 0.1..3 m above the seating surface (seated about 1.2 m; metres, whatever the model units)";
                r.Error(r.At(*t.get("ear_height_m")), os.str());
                ok = false;
            }
        } else if (t.get("ear_height_m")) {
            ok = false;
        } else {
            b.earHeightM = 1.2;  // documented default
        }
        Facing f = readFacing(t, "[[seating]] '" + b.zone + "'");
        if (!f.ok) ok = false;
        b.facing = f.source;
        b.facingDirection = f.direction;
        if (ok) scene.seating.push_back(b);
    }
    if (receiverTables.empty() && seatingTables.empty() && !root.get("receiver") && !root.get("seating"))
        r.Error({path, 1, 1, ""}, "no receiver; add a [[receiver]] block (name, position) or a [[seating]] block");

    // [simulation]
    if (const toml::table* sim = table("simulation")) {
        const std::string where = "[simulation]";
        if (auto v = r.Integer(*sim, "rays", where))
            if (InRange(r, *sim, "rays", where, static_cast<double>(*v), 1, 1e10, "give 1 .. 10^10 rays per source"))
                scene.settings.rays = *v;
        if (auto v = r.Integer(*sim, "image_order", where))
            if (InRange(r, *sim, "image_order", where, static_cast<double>(*v), 0, 20,
                        "image-source order must be 0..20 (later reflections are left to the ray tracer)"))
                scene.settings.imageOrder = static_cast<int>(*v);
        if (auto v = r.Number(*sim, "duration_s", where))
            if (InRange(r, *sim, "duration_s", where, *v, 0.01, 60, "the impulse response length must be 0.01..60 s"))
                scene.settings.durationS = *v;
        if (auto v = r.Integer(*sim, "sample_rate", where))
            if (InRange(r, *sim, "sample_rate", where, static_cast<double>(*v), 22050, 384000,
                        "sample rate must be 22050..384000 Hz (the 8 kHz band needs at least 22.05 kHz)"))
                scene.settings.sampleRate = static_cast<int>(*v);
        if (auto v = r.Integer(*sim, "seed", where))
            if (InRange(r, *sim, "seed", where, static_cast<double>(*v), 0, 9.2e18, "the seed must be a whole number >= 0"))
                scene.settings.seed = static_cast<uint64_t>(*v);
        if (const toml::node* n = sim->get("bands")) {
            const toml::array* a = n->as_array();
            if (!a || a->empty()) {
                r.Error(r.At(*n), "bands in [simulation] must be a list of octave bands, e.g. [125, 250, 500, 1000, 2000, 4000]");
            } else {
                std::set<int> chosen;
                bool ok = true;
                for (size_t k = 0; k < a->size(); ++k) {
                    const toml::node& e = *a->get(k);
                    auto i = e.as_integer();
                    std::optional<int> band =
                        i && std::abs(i->get()) < 100000 ? BandIndexOfNominal(static_cast<int>(i->get())) : std::nullopt;
                    if (!band) {
                        r.Error(r.At(e), "bands: each entry must be an octave band 63, 125, 250, 500, 1000, 2000, 4000 or 8000 (Hz)");
                        ok = false;
                    } else if (!chosen.insert(*band).second) {
                        r.Error(r.At(e), "bands: " + std::to_string(i->get()) + " Hz is listed twice");
                        ok = false;
                    }
                }
                if (ok) scene.settings.reportedBands.assign(chosen.begin(), chosen.end());
            }
        }
    }
    // [review] (design review, issue 10)
    if (const toml::table* rev = table("review")) {
        const std::string where = "[review]";
        scene.review.definedAt = r.At(*rev);
        if (auto v = r.String(*rev, "venue", where)) {
            if (*v == "concert" || *v == "theatre")
                scene.review.venue = *v;
            else
                r.Error(r.At(*rev->get("venue")), "venue in [review] is \"" + *v +
                                                      "\"; it must be \"concert\" or \"theatre\"");
        }
        if (auto v = r.Number(*rev, "flutter_max_angle_deg", where))
            if (InRange(r, *rev, "flutter_max_angle_deg", where, *v, 0, 45,
                        "give the largest splay (degrees, 0..45) still treated as parallel; default 3"))
                scene.review.flutterMaxAngleDeg = *v;
    }
    // [speech] level_db and [noise] octave_db (IEC 60268-16:2011 level-dependent STI terms)
    if (const toml::table* sp = table("speech"))
        if (auto v = r.Number(*sp, "level_db", "[speech]"))
            if (InRange(r, *sp, "level_db", "[speech]", *v, 20, 110,
                        "give the A-weighted speech level at 1 m in dB (normal voice about 60)"))
                scene.speech.levelDb = *v;
    if (const toml::table* nz = table("noise")) {
        if (const toml::node* n = nz->get("octave_db")) {
            const toml::array* arr = n->as_array();
            bool ok = arr && arr->size() == kBandCount;
            Bands levels = Bands::Zero();
            for (size_t i = 0; ok && i < arr->size(); ++i) {
                auto d = (*arr)[i].value<double>();
                if (!d || !std::isfinite(*d) || *d < -20 || *d > 130) ok = false;
                else levels[static_cast<int>(i)] = *d;
            }
            if (ok)
                scene.speech.noiseOctaveDb = levels;
            else
                r.Error(r.At(*n), "octave_db in [noise] must list 8 octave levels in dB (63, 125, ..., 8000 Hz), "
                                  "each within -20..130, e.g. [45, 40, 35, 30, 25, 20, 18, 15]");
        }
    }
    // [output] spatial_seats / spatial_per_zone / hrtf (issue 6). Seat names are checked
    // against the placed seats by ChooseSpatialSeats (spatial_seats.h), once seats exist.
    if (const toml::table* o = table("output")) {
        const std::string where = "[output]";
        if (const toml::node* n = o->get("spatial_seats")) {
            const toml::array* a = n->as_array();
            bool ok = a != nullptr;
            for (size_t k = 0; ok && k < a->size(); ++k) {
                if (auto s = a->get(k)->as_string(); s && !s->get().empty()) {
                    scene.output.spatialSeats.push_back(s->get());
                    scene.output.spatialSeatsAt.push_back(r.At(*a->get(k)));
                } else {
                    r.Error(r.At(*a->get(k)), "each entry of spatial_seats in [output] must be a seat name in quotes, "
                                              "e.g. spatial_seats = [\"stalls-r05-s10\"]");
                    ok = false;
                }
            }
            if (!a)
                r.Error(r.At(*n), "spatial_seats in [output] must be a list of seat names, e.g. "
                                  "spatial_seats = [\"stalls-r05-s10\"] (names as in seats.csv)");
            if (ok && !o->get("spatial_per_zone")) scene.output.spatialPerZone = 0;
        }
        if (auto v = r.Integer(*o, "spatial_per_zone", where))
            if (InRange(r, *o, "spatial_per_zone", where, static_cast<double>(*v), 0, 100,
                        "give 0..100 seats per zone that get AmbiX and binaural files (default 2)"))
                scene.output.spatialPerZone = static_cast<int>(*v);
        if (auto v = r.String(*o, "hrtf", where)) {
            scene.output.hrtfAt = r.At(*o->get("hrtf"));
            const std::string resolved = ResolvePath(path, *v);
            std::error_code ec;
            if (v->empty() || !fs::is_regular_file(resolved, ec))
                r.Error(scene.output.hrtfAt, "hrtf in [output]: no file '" + resolved +
                                                 "'; give the path of a SOFA HRTF file (relative to the scene file), "
                                                 "or leave the key out for the default set");
            else
                scene.output.hrtfPath = resolved;
        }
        if (auto v = r.String(*o, "reflection_phase", where)) {
            if (*v == "random" || *v == "in_phase")
                scene.output.reflectionsInPhase = *v == "in_phase";
            else
                r.Error(r.At(*o->get("reflection_phase")),
                        "reflection_phase in [output] is \"" + *v + "\"; it must be \"random\" (each reflection "
                        "of the impulse responses gets an arbitrary phase, the default) or \"in_phase\" (all "
                        "paths add as positive pressure gains)");
        }
    }
    if (r.Errors() > 0) return std::nullopt;
    return out;
}

namespace {

// Reads the OBJ and the tables a parsed scene names, converts the mesh and resolves materials.
bool LoadMeshAndMaterials(SceneFile& file, Diagnostics& diag) {
    Scene& scene = file.scene;
    const int errorsBefore = diag.ErrorCount();

    // Tables, searched in order, then the built-in library.
    std::vector<MaterialTable> tables;
    for (size_t i = 0; i < file.tablePaths.size(); ++i) {
        auto text = text::ReadUserFile(file.tablePaths[i], "materials table", file.tableAt[i], diag);
        if (text) tables.push_back(ParseMaterialTable(*text, file.tablePaths[i], diag));
    }
    auto model = ReadObj(scene.meshPath, file.meshAt, diag);
    if (!model || diag.ErrorCount() > errorsBefore) return false;

    // Mesh into metres and the internal frame.
    scene.mesh = std::move(model->mesh);
    for (Vec3& v : scene.mesh.vertices) v = scene.FromModel(v);

    std::map<std::string, const SceneFile::Assignment*> assign;
    for (const auto& a : file.assign) assign[a.usemtl] = &a;
    std::vector<std::string> known;
    for (const auto& t : tables)
        for (const auto& m : t.materials) known.push_back(m.name);
    for (const auto& m : BuiltinMaterials().materials) known.push_back(m.name);
    std::string searched;  // "a.csv, b.csv or the built-in library"
    for (const auto& t : tables) searched += (searched.empty() ? "" : ", ") + fs::path(t.path).filename().string();
    searched += (searched.empty() ? "" : " or ") + std::string("the built-in library");

    auto lookup = [&](const std::string& name) -> const Material* {
        for (const auto& t : tables)
            if (const Material* m = t.Find(name)) return m;
        return BuiltinMaterials().Find(name);
    };
    std::map<std::string, int> sceneIndex;  // resolved material name -> Scene::materials index
    auto resolve = [&](const std::string& usemtl, const SourceLoc& at, const std::string& what) -> int {
        auto it = assign.find(usemtl);
        const std::string target = it != assign.end() ? it->second->material : usemtl;
        const Material* m = lookup(target);
        if (!m) {
            if (it != assign.end()) {
                SourceLoc assignAt = it->second->at;
                diag.Error(assignAt, "[materials.assign] maps '" + usemtl + "' to '" + target +
                                         "', which is not in " + searched +
                                         text::DidYouMean(target, known) + "; add it to a table or fix the name");
            } else {
                diag.Error(at, what + " '" + usemtl + "' is not defined in " + searched +
                                   text::DidYouMean(usemtl, known) +
                                   "; add a row with that name to a materials table, or map it in [materials.assign]");
            }
            return -1;
        }
        auto [pos, inserted] = sceneIndex.emplace(m->name, static_cast<int>(scene.materials.size()));
        if (inserted) scene.materials.push_back(*m);
        return pos->second;
    };

    std::vector<int> nameToScene(model->materialNames.size(), -1);
    bool ok = true;
    for (size_t i = 0; i < model->materialNames.size(); ++i) {
        nameToScene[i] = resolve(model->materialNames[i], {scene.meshPath, model->materialFirstLine[i], 0, ""},
                                 "material (usemtl)");
        ok &= nameToScene[i] >= 0;
    }
    int defaultIndex = -1;
    if (model->facesWithoutMaterial > 0) {
        const SourceLoc at{scene.meshPath, model->firstLineWithoutMaterial, 0, ""};
        if (!assign.count("default") && !lookup("default")) {
            diag.Error(at, std::to_string(model->facesWithoutMaterial) +
                               " face(s) have no usemtl (the first is on this line) and no material named "
                               "'default' exists; put a usemtl line before them, or add a 'default' row to a "
                               "materials table, or set default = \"<material>\" in [materials.assign]");
            ok = false;
        } else {
            defaultIndex = resolve("default", at, "material");
            ok &= defaultIndex >= 0;
        }
    }
    // Assignments that match no usemtl are probably misspelt.
    for (const auto& a : file.assign) {
        const auto& names = model->materialNames;
        const bool used = std::find(names.begin(), names.end(), a.usemtl) != names.end() ||
                          (a.usemtl == "default" && model->facesWithoutMaterial > 0);
        if (!used)
            diag.Warning(a.at, "[materials.assign] '" + a.usemtl + "' matches no usemtl in " +
                                   fs::path(scene.meshPath).filename().string() + text::DidYouMean(a.usemtl, names) +
                                   "; it has no effect");
    }
    if (!ok) return false;
    for (int& m : scene.mesh.triangleMaterial) m = m >= 0 ? nameToScene[m] : defaultIndex;
    return diag.ErrorCount() == errorsBefore;
}

}  // namespace

std::optional<Scene> LoadScene(const std::string& path, Diagnostics& diag) {
    auto text = text::ReadUserFile(path, "scene file", SourceLoc{}, diag);
    if (!text) return std::nullopt;
    auto file = ParseSceneToml(*text, path, diag);
    if (!file) return std::nullopt;
    if (!LoadMeshAndMaterials(*file, diag)) return std::nullopt;
    return std::move(file->scene);
}

}  // namespace hallwright
