# Writes a C++ source that holds the status page (page/status.html: HTML, CSS and script in one
# file) as a raw string literal, so that the service serves it without reading files at run time
# and the page needs nothing from elsewhere. Run by lib/CMakeLists.txt in script mode:
#   cmake -DPAGE=status.html -DOUTPUT=status_page.cpp -P embed_page.cmake
file(READ ${PAGE} html)
if(html MATCHES "\\)stagewell_page\"")
  message(FATAL_ERROR "${PAGE} contains the raw-string delimiter )stagewell_page\"")
endif()
file(WRITE ${OUTPUT} "// Generated from lib/src/web/page/status.html by lib/src/web/embed_page.cmake. Do not edit.
#include <string_view>

namespace stagewell::web_detail {

std::string_view status_page_html() {
  return R\"stagewell_page(${html})stagewell_page\";
}

}  // namespace stagewell::web_detail
")
