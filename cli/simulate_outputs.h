#pragma once
// Files written by `simulate`: per-pair CSVs and WAVs as the sources finish, then the tables
// and run.json. Every file goes through a temporary name and a rename.
#include <atomic>
#include <map>
#include <optional>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "hallwright/diagnostics.h"
#include "hallwright/geometry.h"
#include "hallwright/image_sources.h"
#include "hallwright/propagation.h"
#include "hallwright/ray_tracer.h"
#include "hallwright/response.h"
#include "hallwright/room_acoustics.h"
#include "hallwright/run_tables.h"
#include "hallwright/scene.h"
#include "hallwright/wav.h"

namespace hwcli {

struct SimulateOptions {
    std::string scene, out;
    bool paths = false, histograms = false, exhaustiveImages = false, quiet = false, noWav = false;
    int threads = 0;
    std::optional<uint64_t> seed;
    std::optional<int64_t> rays;
    std::string targetText;                 // --target-ci as given
    std::map<std::string, double> targets;  // parsed: parameter -> 95 % half-width
    int64_t maxRays = 2000000;              // --max-rays
    std::string wavFormat = "float32";      // --wav-format float32 | pcm24
    std::string listen;                     // --listen DRY.wav: listening files for the spatial seats
};

/* What run.json records besides settings and timings. */
struct RunRecord {
    const hallwright::Scene* scene = nullptr;
    hallwright::RoomEstimates estimates;
    nlohmann::ordered_json sources = nlohmann::ordered_json::array();  // one entry per finished source
    bool failed = false, interrupted = false;
    std::vector<std::string> errors;
    std::vector<int> finishedSources;
    std::map<int, int64_t> extraRays;                      // --target-ci rounds, per source
    std::map<int, std::vector<int64_t>> raysPerSeat;       // per source, when refined
    nlohmann::ordered_json notConverged = nlohmann::ordered_json::array();
    int64_t wavFiles = 0;

    void AddSource(int source, const hallwright::TracerResult& traced, const hallwright::ImageSourceStats& images);
    void Fail(const hallwright::Diagnostics& diag);
};

class OutputWriter {
  public:
    OutputWriter(std::string dir, const hallwright::Scene& scene, const hallwright::Geometry& geometry)
        : dir_(std::move(dir)), scene_(scene), geometry_(geometry) {}

    void WritePaths(int source, const std::vector<hallwright::ReceiverPaths>& paths, hallwright::Diagnostics& diag);
    void WriteHistograms(int source, const std::vector<hallwright::ReceiverPaths>& paths,
                         const std::vector<hallwright::ReceiverHistogram>& histograms, hallwright::Diagnostics& diag);
    /* Mono WAV + sidecar per seat; stops early (between seats) when `stop` becomes true. */
    void WriteImpulseResponses(int source, const std::vector<hallwright::ReceiverPaths>& paths,
                               const std::vector<hallwright::ReceiverHistogram>& histograms,
                               const hallwright::SynthesisContext& context, const std::atomic<bool>& stop,
                               hallwright::WavFormat format, RunRecord& record, hallwright::Diagnostics& diag,
                               std::atomic<int64_t>* seatsDone = nullptr);
    /* AmbiX and binaural IRs (with sidecars) for the chosen receivers; `hrtf` may be null
       (binaural then skipped). */
    void WriteSpatialImpulseResponses(int source, const std::vector<hallwright::ReceiverPaths>& paths,
                                      const std::vector<hallwright::ReceiverHistogram>& histograms,
                                      const std::vector<int>& receivers, const hallwright::SynthesisContext& context,
                                      const hallwright::HrtfSet* hrtf, hallwright::WavFormat format, RunRecord& record,
                                      hallwright::Diagnostics& diag);
    void WriteTables(const std::vector<hallwright::SeatResult>& seats, hallwright::Diagnostics& diag);
    void WriteRunJson(const SimulateOptions& options, const RunRecord& record, const nlohmann::ordered_json& timings,
                      hallwright::Diagnostics& diag);

  private:
    std::string dir_;
    const hallwright::Scene& scene_;
    const hallwright::Geometry& geometry_;
    std::vector<std::string> written_;
};

}  // namespace hwcli
