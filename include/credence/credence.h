// Umbrella header for library users: includes every public module header.
//
// credence trains dense classifiers on tabular data with stochastic-gradient MCMC
// samplers or their optimizer limits (run_train in train.h: a CSV in, a crash-safe run
// file out), and scores how well their probabilities are calibrated. Each module
// header below opens with its own contract.
#pragma once

#include "credence/budget.h"
#include "credence/data.h"
#include "credence/diagnostics.h"
#include "credence/ensemble.h"
#include "credence/held_out.h"
#include "credence/metrics.h"
#include "credence/net.h"
#include "credence/posterior.h"
#include "credence/plot.h"
#include "credence/plot_heatmap.h"
#include "credence/html_report.h"
#include "credence/assess.h"
#include "credence/compare.h"
#include "credence/method_flags.h"
#include "credence/method_run.h"
#include "credence/predict.h"
#include "credence/predict_job.h"
#include "credence/prior_summary.h"
#include "credence/run_diagnostics.h"
#include "credence/run_settings.h"
#include "credence/run_verdict.h"
#include "credence/samplers.h"
#include "credence/status.h"
#include "credence/run_stein.h"
#include "credence/stein.h"
#include "credence/summaries.h"
#include "credence/sweep.h"
#include "credence/synth.h"
#include "credence/table_potential.h"
#include "credence/train.h"
#include "credence/tuning_map.h"
#include "credence/version.h"
