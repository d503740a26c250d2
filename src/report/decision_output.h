// The two-class part of assess's output: the positive class, its reliability curve, the
// decisions at the chosen threshold, and the precision-recall and ROC curves
// (docs/assess-json.md, "Decisions").
#pragma once

#include <string>

#include "credence/assess.h"
#include "util/json.h"

namespace credence {

/// Text blocks for stdout; nothing for more than two classes.
void decision_text(std::string& out, const AssessJobResult& result);

/// Keys "positive_class", "decisions", "precision_recall" and "roc" of the JSON document
/// (inside its open top-level object); nothing for more than two classes.
void decision_json(JsonWriter& j, const AssessJobResult& result);

/// The positive-class reliability curves of one scored ensemble under the key
/// "positive_class_curve": {"class", "width", "mass"}.
void positive_curve_json(JsonWriter& j, const Assessment& a, const std::string& positive);

}  // namespace credence
