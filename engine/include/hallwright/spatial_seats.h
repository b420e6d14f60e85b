#pragma once
// Zone order, and which seats get more than a mono IR: decay curves in the report (one per zone) and AmbiX /
// binaural files ([output] spatial_seats and spatial_per_zone, scene.h).
#include <string>
#include <vector>

#include "hallwright/diagnostics.h"
#include "hallwright/scene.h"

namespace hallwright {

/* Zone names in order of first appearance among the receivers (the order of every table). */
std::vector<std::string> ZoneOrder(const Scene& scene);

/* Per zone (in order of first appearance), the seat nearest the zone's centroid. */
std::vector<int> SeatsNearZoneCentroids(const Scene& scene);

/* The seats that get AmbiX and binaural files, ascending and without repeats: every seat
   named in [output] spatial_seats, plus spatial_per_zone seats of each zone — the seat
   nearest its centroid, then the one farthest from the first source (the zone's back), then
   each next the seat farthest from those already chosen (ties: the lower index). A name
   that is no seat is an error at its place in the scene file, with a did-you-mean. */
std::vector<int> ChooseSpatialSeats(const Scene& scene, Diagnostics& diag);

}  // namespace hallwright
