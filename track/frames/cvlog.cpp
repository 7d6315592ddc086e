#include <opencv2/core/utils/logger.hpp>
#include "cvlog.h"

void gaptraceSilenceOpenCV(void) {
    cv::utils::logging::setLogLevel(cv::utils::logging::LOG_LEVEL_SILENT);
}
