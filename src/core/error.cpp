#include "core/error.h"

namespace figura {

const char* StatusName(Status status) {
  switch (status) {
    case Status::kOk:
      return "ok";
    case Status::kWarning:
      return "warning";
    case Status::kError:
      return "error";
  }
  return "error";
}

}  // namespace figura
