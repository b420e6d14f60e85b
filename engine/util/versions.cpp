#include "hallwright/versions.h"

#include <embree3/rtcore_config.h>
#include <oneapi/tbb/version.h>
#include <sndfile.h>
#include <toml++/toml.h>
#include <Eigen/Core>

namespace hallwright {

std::vector<std::pair<std::string, std::string>> LibraryVersions() {
    char sndfileVersion[128] = {0};
    sf_command(nullptr, SFC_GET_LIB_VERSION, sndfileVersion, sizeof(sndfileVersion));
    return {
        {"hallwright", HALLWRIGHT_VERSION},
        {"embree", RTC_VERSION_STRING},
        {"onetbb", TBB_VERSION_STRING},
        {"eigen", std::to_string(EIGEN_WORLD_VERSION) + "." + std::to_string(EIGEN_MAJOR_VERSION) + "." +
                      std::to_string(EIGEN_MINOR_VERSION)},
        {"toml++", std::to_string(TOML_LIB_MAJOR) + "." + std::to_string(TOML_LIB_MINOR) + "." +
                       std::to_string(TOML_LIB_PATCH)},
        {"libsndfile", sndfileVersion},
    };
}

}  // namespace hallwright
