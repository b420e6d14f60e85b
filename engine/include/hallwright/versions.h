#pragma once
// Program and library versions, for `hallwright version` and run.json.
#include <string>
#include <utility>
#include <vector>

namespace hallwright {
std::vector<std::pair<std::string, std::string>> LibraryVersions();
}
