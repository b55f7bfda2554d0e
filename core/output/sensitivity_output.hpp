#pragma once
/// The writers of a SensitivityResult (core/chain/sensitivity.hpp): the terminal text and JSON.
///
/// Example:
///   std::cout << (json ? sensitivity_json(result) : sensitivity_text(result));
#include <string>

#include "core/chain/sensitivity.hpp"

namespace spurcast {

/// JSON: `scenario`, `step_percent`, `targets` (what each figure is a change of), `sensitivities`
/// per target, ranked by magnitude (objects with `key`, `value` as written, `value_si`, `unit` of
/// `value_si` ("" for a plain number and for a fraction, whose `value_si` is the ratio: 0.25 for "25 %"),
/// `frequency_hz`, `detector` or `band`, `db_per_10_percent` (null when there is no reading there
/// after the change, with `note`), `worst_frequency_after_hz` and `worst_level_after` (null unless
/// the worst reading moved)), `invalid` (key, value, message), `skipped` (key, reason), `threads`,
/// `notes`.
[[nodiscard]] std::string sensitivity_json(const SensitivityResult& result);

/// The terminal text: the worst readings the figures refer to, then per reading one line per key,
/// ranked (keys that change it by less than 0.005 dB, with the worst frequency unmoved, counted)
/// (`coupling.parasitic_capacitance  35 pF  +0.83 dB per +10 %  at 220 kHz (quasi-peak)`), the keys
/// whose +10 % is invalid, the keys skipped with the reason, and the notes.
[[nodiscard]] std::string sensitivity_text(const SensitivityResult& result);

}  // namespace spurcast
