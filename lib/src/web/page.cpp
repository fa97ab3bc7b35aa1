// `/`: the status page, compiled in (page/status.html, embedded by embed_page.cmake).
#include "web/state.hpp"

namespace stagewell::web_detail {

std::string_view status_page_html();  // the generated source

HttpAnswer page_answer() {
  HttpAnswer answer;
  answer.content_type = "text/html; charset=utf-8";
  // Everything the page needs is in it; it may only call this server's API.
  answer.headers.emplace_back("Content-Security-Policy",
                              "default-src 'none'; script-src 'unsafe-inline'; style-src "
                              "'unsafe-inline'; connect-src 'self'; img-src data:");
  answer.headers.emplace_back("Cache-Control", "no-cache");
  answer.body = std::string(status_page_html());
  return answer;
}

}  // namespace stagewell::web_detail
