#pragma once
// The scene: model, materials, sources, seats and settings, as read from scene.toml.
// Positions are converted with the mesh into metres and the internal y-up frame.
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "hallwright/bands.h"
#include "hallwright/diagnostics.h"
#include "hallwright/material.h"
#include "hallwright/mesh.h"

namespace hallwright {

struct Source {
    std::string name;
    Vec3 position;
    SourceLoc definedAt;
};

struct Receiver {
    std::string name;
    Vec3 position;
    std::string zone;          // "" when not given
    Vec3 facing;               // unit vector the listener looks along (internal frame)
    std::string facingSource;  // the source it faces, or "" when given as a direction
    bool generated = false;    // from a [[seating]] block
    SourceLoc definedAt;
};

struct AirConditions {
    double temperatureC = 20.0;
    double humidityPct = 50.0;
    double pressureKPa = 101.325;
};

struct SimulationSettings {
    int64_t rays = 100000;
    int imageOrder = 3;
    std::optional<double> durationS;  // default: derived from the room's Eyring T
    int sampleRate = 48000;
    uint64_t seed = 1;
    std::vector<int> reportedBands = {1, 2, 3, 4, 5, 6};  // band indices (125 Hz - 4 kHz)
};

/* The [review] keys of the design review (issue 10). */
struct ReviewSettings {
    std::string venue = "concert";    // "concert" (stricter overhang limit) | "theatre"
    double flutterMaxAngleDeg = 3.0;  // common practice, no source
    SourceLoc definedAt;
};

/* [speech] and [noise]: the level-dependent terms of STI (IEC 60268-16:2011). */
struct SpeechSettings {
    std::optional<double> levelDb;     // [speech] level_db: A-weighted speech level at 1 m
    std::optional<Bands> noiseOctaveDb;  // [noise] octave_db: background noise per octave 63..8k
};

/* [output]: which seats get AmbiX and binaural files, and the HRTF set. */
struct OutputSettings {
    std::vector<std::string> spatialSeats;   // [output] spatial_seats: seat names
    std::vector<SourceLoc> spatialSeatsAt;   // where each name is written
    /* [output] spatial_per_zone: seats chosen per zone (nearest the zone centroid, then the
       farthest from the first source, then spread out); default 2, or 0 when spatial_seats
       is given without it. */
    int spatialPerZone = 2;
    std::string hrtfPath;                    // [output] hrtf: SOFA file ("" = the default set)
    SourceLoc hrtfAt;
    /* [output] reflection_phase: "random" (default) gives each reflection of the IRs a
       pseudo-random phase; "in_phase" adds every path as a positive pressure gain
       (SynthesisContext::coherentReflections). */
    bool reflectionsInPhase = false;
};

/* A [[seating]] block: a grid of seats laid over the faces of OBJ groups. */
struct SeatingBlock {
    std::string zone;
    std::vector<std::string> surfaces;  // OBJ group names
    double spacingM = 1.0;              // in metres (converted from model units)
    double earHeightM = 1.2;            // in metres, above the seating surface
    std::string facing;                 // a source name, or "" for the first source
    std::optional<Vec3> facingDirection;  // when given as a direction (internal frame)
    SourceLoc definedAt;
};

struct Scene {
    std::string title;
    std::string scenePath;    // the TOML file
    std::string meshPath;     // resolved OBJ path
    std::string modelUnits = "m";
    std::string modelUp = "y";
    Mesh mesh;
    std::vector<Material> materials;  // those used by the mesh, indexed by Mesh::triangleMaterial
    std::vector<Source> sources;
    std::vector<Receiver> receivers;    // explicit receivers, then generated seats
    std::vector<SeatingBlock> seating;
    AirConditions air;
    SimulationSettings settings;
    ReviewSettings review;
    SpeechSettings speech;
    OutputSettings output;

    /* Converts a point from the internal frame back to the model's units and axes. */
    Vec3 ToModel(const Vec3& p) const;
    /* Converts a point given in model units and axes into the internal frame. */
    Vec3 FromModel(const Vec3& p) const;
    /* Same for directions (no scaling). */
    Vec3 DirectionToModel(const Vec3& d) const;
    Vec3 DirectionFromModel(const Vec3& d) const;
};

/* Metres per model unit for "m", "cm", "mm", "in", "ft" (throws std::invalid_argument otherwise). */
double ModelUnitScale(const std::string& units);

/* Reads scene.toml and everything it names; errors go to diag and give nothing back. */
std::optional<Scene> LoadScene(const std::string& path, Diagnostics& diag);

}  // namespace hallwright
