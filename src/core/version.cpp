#include "core/version.h"

#include "figura/version_config.h"

namespace figura {

const char* Version() { return FIGURA_VERSION_STRING; }

}  // namespace figura
