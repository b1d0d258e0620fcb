// Constants of the published decision rules (the presets of PresetRule), kept in
// one place for rules.cc and its tests. The rule API itself is in tidemark/probe.h.
//
// Thread safety: constants only.
#ifndef TIDEMARK_SRC_PROBE_RULES_H_
#define TIDEMARK_SRC_PROBE_RULES_H_

#include <cstdint>

namespace tidemark::rules {

/// Brown et al. 2020, "Language Models are Few-Shot Learners", App. C: an item is
/// dirty when any of its 13-grams occurs in the training data.
inline constexpr int kGpt3N = 13;
/// Chowdhery et al. 2022, "PaLM", section 8: an item is contaminated when at least
/// 70% of its 8-grams occur in the training data.
inline constexpr int kPalmN = 8;
inline constexpr double kPalmHitFraction = 0.7;

}  // namespace tidemark::rules

#endif  // TIDEMARK_SRC_PROBE_RULES_H_
