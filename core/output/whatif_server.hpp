#pragma once
/// The what-if server (`spurcast serve`): cpp-httplib bound to 127.0.0.1 only, every request handed
/// to WhatIfSession::handle() (core/output/whatif.hpp), which holds the security checks.
///
/// Example:
///   WhatIfServer server(WhatIfSession(parse_toml_file(path, "scenario file"), path, folder));
///   const int port = server.bind(0);   // 0: an ephemeral port
///   std::thread t([&] { server.listen(); });
///   ...; server.stop(); t.join();
#include <memory>

#include "core/output/whatif.hpp"

namespace spurcast {

class WhatIfServer {
 public:
  explicit WhatIfServer(WhatIfSession session);
  ~WhatIfServer();
  WhatIfServer(const WhatIfServer&) = delete;
  WhatIfServer& operator=(const WhatIfServer&) = delete;

  /// Binds 127.0.0.1:`port` (0: the system picks one) and returns the port. Error when it cannot:
  /// `cannot listen on 127.0.0.1:8470 (in use, or not allowed)`.
  int bind(int port);
  /// Serves until stop(); call after bind().
  void listen();
  /// Makes listen() return (from another thread).
  void stop();

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace spurcast
