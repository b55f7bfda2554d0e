#pragma once
/// Measured parts from Touchstone 1.x files (the IBIS Open Forum's open format for network
/// parameters, docs/design.md §5): `.s1p` (a one-port: a two-terminal part's impedance) and `.s2p`
/// (a two-port: a choke or a whole filter).
///
/// What is read (Touchstone File Format Specification, version 1.1):
///  - the option line `# <unit> <parameter> <format> R <n>`, tokens in any order and any case:
///    unit Hz, kHz, MHz or GHz (default GHz), parameter S (the only one read here; Y, Z, H and G
///    are an error), format RI (real, imaginary), MA (magnitude, angle in degrees) or DB
///    (20·log10 magnitude, angle in degrees) (default MA), reference resistance R (default 50 Ω);
///    one option line, before the data;
///  - comments from `!` to the end of the line;
///  - data: a frequency and then the parameters, S11 for a one-port and S11 S21 S12 S22 for a
///    two-port (the version 1 order), separated by spaces or tabs, a record may continue on the
///    next line; frequencies strictly increasing (a two-port file's noise-parameter block, which
///    starts with a lower frequency, is an error: it is not read).
/// Errors name the file, line and column.
///
/// Between the file's frequencies, S is interpolated linearly in frequency on its real and
/// imaginary parts; outside the file's range there is no value (an error when the network is
/// solved there, never an extrapolation).
#include <array>
#include <complex>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "core/coupling/network.hpp"
#include "core/input/toml_reader.hpp"

namespace spurcast {

/// The contents of one Touchstone file, as S-parameters, with the admittance form a Network uses.
class TouchstoneData final : public TabulatedAdmittance {
 public:
  std::string file;                  ///< as given, for messages
  int ports = 1;                     ///< 1 (.s1p) or 2 (.s2p)
  double reference_ohm = 50.0;       ///< the option line's R
  std::vector<double> frequency_hz;  ///< strictly increasing
  /// Per frequency, the S matrix row-major: S11, S12, S21, S22 (a one-port uses [0] only).
  std::vector<std::array<std::complex<double>, 4>> s;

  /// S at `frequency_hz`, interpolated linearly on real and imaginary parts between the two
  /// neighbouring points. Throws Error outside the file's range.
  [[nodiscard]] std::array<std::complex<double>, 4> s_at(double frequency_hz) const;

  [[nodiscard]] int port_count() const override { return ports; }
  [[nodiscard]] double lowest_hz() const override { return frequency_hz.front(); }
  [[nodiscard]] double highest_hz() const override { return frequency_hz.back(); }
  [[nodiscard]] const std::string& describe() const override { return file; }
  /// Y from S with one reference resistance R for every port: one-port Y = (1 − S)/(R·(1 + S)),
  /// two-port Y = (1/R)·(I − S)·(I + S)⁻¹ (the standard S-to-Y conversion, Pozar, *Microwave
  /// Engineering*, Table 4.2, from memory). Throws Error where I + S is singular (an ideal short).
  [[nodiscard]] std::array<std::complex<double>, 4> admittance(double frequency_hz) const override;
};

/// Parses Touchstone text. `ports` (1 or 2) comes from the file's extension; `name` is used in
/// messages. Throws Error "name:line:column: ..." on anything it does not read.
[[nodiscard]] std::shared_ptr<const TouchstoneData> parse_touchstone(std::string_view text,
                                                                     const std::string& name,
                                                                     int ports);

/// The port count a Touchstone file name implies: 1 for ".s1p", 2 for ".s2p" (any case); Error
/// "expected a .s1p or .s2p file, found 'x.txt'" otherwise.
[[nodiscard]] int touchstone_ports(const std::string& path);

/// Reads and parses a Touchstone file (ports from its extension). Error "path: cannot open file".
[[nodiscard]] std::shared_ptr<const TouchstoneData> load_touchstone(const std::string& path);

/// Reads the Touchstone file named by the scenario key `key` (a path relative to the scenario
/// file's folder, or absolute) and checks that it has `ports` ports; `file` receives the name as
/// given. Error at the key "expected a .s1p (one-port) file, found 'x.s2p'" for the wrong kind.
[[nodiscard]] std::shared_ptr<const TouchstoneData> read_touchstone_file(TableReader& reader, std::string_view key,
                                                                         int ports, std::string& file);

}  // namespace spurcast
