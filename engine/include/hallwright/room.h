#pragma once
// A loaded, validated room: the scene plus its geometry, with seats generated and every
// source and receiver checked against the model. This is what every command starts from.
#include <memory>
#include <string>

#include "hallwright/geometry.h"
#include "hallwright/scene.h"

namespace hallwright {

struct Room {
    Scene scene;
    Geometry geometry;  // refers to scene.mesh: a Room is never copied or moved (held by pointer)
};

/* Generates the seats of every [[seating]] block and validates all positions. */
void PlaceReceivers(Scene& scene, const Geometry& geometry, Diagnostics& diag);

/* Load + geometry + seats. Returns nullptr when diag holds errors. */
std::unique_ptr<Room> LoadRoom(const std::string& scenePath, Diagnostics& diag);

}  // namespace hallwright
