#include "core/output/whatif_server.hpp"

#include <httplib.h>

#include <string>
#include <utility>

#include "core/input/error.hpp"

namespace spurcast {

struct WhatIfServer::Impl {
  explicit Impl(WhatIfSession s) : session(std::move(s)) {}
  WhatIfSession session;
  httplib::Server server;
};

namespace {

void answer(const WhatIfSession& session, const httplib::Request& req, httplib::Response& res) {
  WhatIfRequest request;
  request.method = req.method;
  request.path = req.path;
  request.host = req.get_header_value("Host");
  if (req.has_header("Origin")) request.origin = req.get_header_value("Origin");
  request.body = req.body;
  const WhatIfResponse response = session.handle(request);
  res.status = response.status;
  if (response.retry_after_s) res.set_header("Retry-After", std::to_string(*response.retry_after_s));
  // The page and its answers are for this browser tab only: no caching, no framing by other pages.
  res.set_header("Cache-Control", "no-store");
  res.set_header("X-Frame-Options", "DENY");
  res.set_header("X-Content-Type-Options", "nosniff");
  res.set_content(response.body, response.content_type.c_str());
}

}  // namespace

WhatIfServer::WhatIfServer(WhatIfSession session) : impl_(std::make_unique<Impl>(std::move(session))) {
  httplib::Server& server = impl_->server;
  // httplib refuses a longer body itself (413) before reading it; the handler checks again.
  server.set_payload_max_length(whatif_max_request_bytes);
  // httplib's default also sets SO_REUSEPORT, which would let another local process bind the same
  // port and take a share of the connections: only SO_REUSEADDR (quick restart after a stop).
  server.set_socket_options([](socket_t sock) {
    int yes = 1;
    (void)setsockopt(sock, SOL_SOCKET, SO_REUSEADDR, &yes, sizeof(yes));
  });
  const WhatIfSession& s = impl_->session;
  const auto handler = [&s](const httplib::Request& req, httplib::Response& res) { answer(s, req, res); };
  for (const char* pattern : {R"(/.*)"}) {
    server.Get(pattern, handler);
    server.Post(pattern, handler);
    server.Put(pattern, handler);
    server.Delete(pattern, handler);
    server.Patch(pattern, handler);
    server.Options(pattern, handler);
  }
  // Errors httplib answers itself (413 over the payload limit, 400 unparsable request) get a JSON body too.
  server.set_error_handler(httplib::Server::HandlerWithResponse([](const httplib::Request&, httplib::Response& res) {
    if (!res.body.empty()) return httplib::Server::HandlerResponse::Unhandled;
    const std::string message = res.status == 413
                                    ? "request body over " + std::to_string(whatif_max_request_bytes) + " bytes"
                                    : "request refused (HTTP " + std::to_string(res.status) + ")";
    res.set_content("{\"error\": \"" + message + "\"}\n", "application/json");
    return httplib::Server::HandlerResponse::Handled;
  }));
}

WhatIfServer::~WhatIfServer() = default;

int WhatIfServer::bind(int port) {
  // Loopback only: the page edits nothing on disk, but it must not be reachable from the network.
  const int bound = port == 0 ? impl_->server.bind_to_any_port("127.0.0.1")
                              : (impl_->server.bind_to_port("127.0.0.1", port) ? port : -1);
  if (bound <= 0) {
    throw Error("cannot listen on 127.0.0.1:" + std::to_string(port) + " (in use, or not allowed)");
  }
  impl_->session.set_port(bound);
  return bound;
}

void WhatIfServer::listen() { impl_->server.listen_after_bind(); }

void WhatIfServer::stop() { impl_->server.stop(); }

}  // namespace spurcast
