// Which `credence train` flag each method reads (Python's train keywords go by the same
// names), and the refusal of one it does not.
//
// A flag the chosen method ignores is an error (exit 2), never a silent no-op: the message
// names the flag, the method and what that method reads instead. The table in
// method_flags.cc is the one place that says which method reads which flag; the help
// text of each flag names the same methods.
#pragma once

#include <set>
#include <string>

#include "credence/samplers_settings.h"
#include "credence/status.h"

namespace credence {

/// Refuses (kInvalidInput) the first flag in `given` that `method` does not read, with
/// `schedule` the chosen schedule and `net_file` whether --net was given.
Status check_method_flags(Method method, ScheduleKind schedule, bool net_file,
                          const std::set<std::string>& given);

/// Defaults that hang on the method and on what was given: the method's own learning rate
/// (default_learning_rate: sgld 0.1, psgld 3e-3, santa and santa-opt 1e-3, others 0.01) unless --lr
/// was given (samplers_settings.h says why). Once the table is read, training sizes sgld's
/// and sghmc's rate to it (budget.h, size_learning_rate), again only without --lr.
void apply_method_defaults(SamplerSettings& sampler, const std::set<std::string>& given);

/// With --resume every setting comes from the run file: refuses a method, chain or
/// network flag, which would be ignored.
Status check_resume_flags(const std::set<std::string>& given);

}  // namespace credence
