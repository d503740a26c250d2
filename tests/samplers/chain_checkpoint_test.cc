// Chain checkpoints with a real minibatch potential: resume bit for bit from any
// checkpoint, the hook ordering guarantee, checkpoint requests from another thread,
// and no heap allocation in the step loop between checkpoints (malloc is interposed
// here and counted only while a test asks for it).
#include <gtest/gtest.h>

#include <atomic>
#include <condition_variable>
#include <cstring>
#include <map>
#include <mutex>
#include <random>
#include <thread>
#include <vector>

#include "credence/samplers.h"
#include "credence/table_potential.h"
#include "testing/seed.h"

#include "testing/alloc_counter.h"

// operator new ends in malloc (libstdc++), so it is counted through the override above.

namespace credence {
namespace {

// 200 rows x 5 features, 3 classes from a noisy random linear rule (drawn here).
struct SmallTable {
  TrainingRows rows;
  ParamLayout layout;
  PriorSpec prior;
};

SmallTable make_table(std::vector<Index> hidden, std::uint64_t seed) {
  SmallTable t;
  std::mt19937_64 engine(seed);
  std::normal_distribution<float> normal(0.0f, 1.0f);
  t.rows.x.resize(5, 200);
  Eigen::MatrixXf rule(3, 5);
  for (Index i = 0; i < rule.size(); ++i) rule.data()[i] = normal(engine);
  for (Index n = 0; n < 200; ++n) {
    for (Index j = 0; j < 5; ++j) t.rows.x(j, n) = normal(engine);
    Eigen::VectorXf score = rule * t.rows.x.col(n);
    for (Index k = 0; k < 3; ++k) score[k] += normal(engine);
    Index best = 0;
    score.maxCoeff(&best);
    t.rows.labels.push_back(static_cast<std::int32_t>(best));
  }
  Result<NetSpec> spec = net_spec_from_options(hidden, "tanh");
  EXPECT_TRUE(spec.ok());
  t.prior = spec->prior;
  Result<ParamLayout> layout = resolve_layout(*spec, 5, 3);
  EXPECT_TRUE(layout.ok());
  t.layout = *layout;
  return t;
}

SamplerSettings settings_for(Method method) {
  SamplerSettings s;
  s.method = method;
  s.learning_rate = method == Method::kAdam ? 1e-2 : 2e-2;
  s.relativistic.mass = 1;
  s.relativistic.speed = 1;
  s.relativistic.friction = 1;
  s.relativistic.adapt_mass = true;
  s.relativistic.adapt_window = 10;
  s.hmc.leapfrog_steps = 3;
  return s;
}

const Method kMethods[] = {Method::kSgld, Method::kSghmc, Method::kRsghmc, Method::kPsgld,
                           Method::kAdam, Method::kHmc,   Method::kSanta};

struct Kept {
  int chain;
  std::int64_t step;
  std::int64_t index;
  Eigen::VectorXf theta;
};

// What one chain's hooks saw, in call order.
struct Event {
  enum Kind { kTrace, kSample, kCheckpoint } kind;
  std::int64_t step;  // trace/sample: the step; checkpoint: next_step
  std::int64_t kept;  // sample: index; checkpoint: kept
  CheckpointCause cause = CheckpointCause::kEnded;
};

struct Collected {
  std::map<int, std::vector<Kept>> samples;
  std::map<int, std::vector<ChainCheckpoint>> checkpoints;
  std::map<int, std::vector<Event>> events;
  RunOutcome outcome;
};

constexpr std::int64_t kBatch = 32;  // 200 rows: 7 batches per epoch, the last of 8

// Runs `chains` on the table with TablePotential minibatches; `on_trace` may stop.
Collected run(const SmallTable& t, Method method, const ChainSettings& chains,
              const RunControl& control = {}, const std::vector<ChainCheckpoint>& resume = {},
              std::function<void(const TraceRow&)> on_trace = {}) {
  Collected out;
  ChainHooks hooks;
  hooks.on_trace = [&](const TraceRow& row) {
    out.events[row.chain].push_back({Event::kTrace, row.step, 0});
    if (on_trace) on_trace(row);
  };
  hooks.on_sample = [&](const KeptSample& k) {
    out.samples[k.chain].push_back({k.chain, k.step, k.index, k.theta});
    out.events[k.chain].push_back({Event::kSample, k.step, k.index});
  };
  hooks.on_checkpoint = [&](const ChainCheckpoint& c) {
    out.checkpoints[c.chain].push_back(c);
    out.events[c.chain].push_back({Event::kCheckpoint, c.next_step, c.kept, c.cause});
  };
  const std::uint64_t seed = chains.seed;
  auto factory = [&](int chain) -> std::unique_ptr<PotentialFn> {
    auto potential = TablePotential::create(t.rows, t.layout, t.prior, {}, {.batch_rows = kBatch},
                                            seed + 1000 * static_cast<std::uint64_t>(chain + 1));
    EXPECT_TRUE(potential.ok()) << potential.status().message();
    return std::move(*potential);
  };
  auto init = [&](int chain, ThetaRef theta) {
    initialize_params<float>(theta, t.layout, 50 + static_cast<std::uint64_t>(chain));
    return Status::ok_status();
  };
  Result<RunOutcome> outcome = run_chains(settings_for(method), chains, t.layout.num_params,
                                          factory, init, hooks, control, resume);
  EXPECT_TRUE(outcome.ok()) << outcome.status().message();
  if (outcome.ok()) out.outcome = *outcome;
  return out;
}

bool same_bits(const Eigen::VectorXf& a, const Eigen::VectorXf& b) {
  return a.size() == b.size() &&
         std::memcmp(a.data(), b.data(), sizeof(float) * static_cast<std::size_t>(a.size())) == 0;
}

// first[0, upto) followed by rest must be whole, bit for bit, with the same steps.
void expect_joined_equal(const std::vector<Kept>& first, std::int64_t upto,
                         const std::vector<Kept>& rest, const std::vector<Kept>& whole,
                         const std::string& what) {
  std::vector<const Kept*> joined;
  for (const Kept& k : first) {
    if (k.index < upto) joined.push_back(&k);
  }
  for (const Kept& k : rest) joined.push_back(&k);
  ASSERT_EQ(joined.size(), whole.size()) << what;
  for (std::size_t i = 0; i < whole.size(); ++i) {
    ASSERT_EQ(joined[i]->step, whole[i].step) << what << " sample " << i;
    ASSERT_EQ(joined[i]->index, whole[i].index) << what << " sample " << i;
    ASSERT_TRUE(same_bits(joined[i]->theta, whole[i].theta)) << what << " sample " << i;
  }
}

ChainSettings layout_for_resume() {
  ChainSettings c;
  c.chains = 2;
  c.threads = 2;
  c.burn_in = 30;
  c.thin = 3;
  c.samples = 12;  // 66 steps: about 10 epochs of 7 batches
  c.seed = testing::test_seed(61);
  return c;
}

TEST(ChainCheckpoints, ResumeWithMinibatchesContinuesBitForBit) {
  // Reference: the same run uninterrupted (run A). Run B is stopped through the stop
  // flag when chain 0 traces step `stop_at` (in burn-in, then while sampling); run C
  // resumes every chain from its final checkpoint, run D from a checkpoint in the middle
  // of those B sent. B's samples before the checkpoint + C's (or D's) must equal A's.
  for (const std::vector<Index>& hidden : {std::vector<Index>{}, std::vector<Index>{6}}) {
    const SmallTable t = make_table(hidden, testing::test_seed(60));
    const ChainSettings c = layout_for_resume();
    for (Method m : kMethods) {
      const std::string name = std::string(method_name(m)) + (hidden.empty() ? "" : " (hidden)");
      const Collected whole = run(t, m, c);
      ASSERT_TRUE(whole.outcome.status.ok()) << name << ": " << whole.outcome.status.message();
      ASSERT_EQ(whole.samples.at(0).size(), 12u) << name;
      for (std::int64_t stop_at : {17, 52}) {
        std::atomic<bool> stop{false};
        const Collected first = run(t, m, c, {.stop = &stop}, {}, [&](const TraceRow& row) {
          if (row.chain == 0 && row.step == stop_at) stop = true;
        });
        const std::string what = name + ", stopped at " + std::to_string(stop_at);
        const ChainCheckpoint& last0 = first.outcome.chains[0].checkpoint;
        ASSERT_EQ(last0.end, ChainEnd::kStopped) << what;
        EXPECT_EQ(last0.cause, CheckpointCause::kEnded);
        EXPECT_EQ(last0.next_step, stop_at + 1) << what;
        EXPECT_EQ(last0.status.code(), StatusCode::kInterrupted);
        EXPECT_EQ(last0.reason, "stop requested");
        // The potential's minibatch position travels with the sampler's state.
        ASSERT_EQ(last0.state.words.count("model.batch_position"), 1u) << what;
        EXPECT_EQ(last0.state.words.count("rng"), 1u) << what;

        std::vector<ChainCheckpoint> finals, middles;
        for (int chain = 0; chain < 2; ++chain) {
          const std::vector<ChainCheckpoint>& sent = first.checkpoints.at(chain);
          ASSERT_FALSE(sent.empty());
          // The outcome's checkpoint is the last one the hook saw.
          EXPECT_EQ(sent.back().next_step,
                    first.outcome.chains[static_cast<std::size_t>(chain)].checkpoint.next_step);
          EXPECT_EQ(sent.back().state,
                    first.outcome.chains[static_cast<std::size_t>(chain)].checkpoint.state);
          finals.push_back(sent.back());
          middles.push_back(sent[sent.size() / 2]);
        }
        const Collected rest = run(t, m, c, {}, finals);
        const Collected from_middle = run(t, m, c, {}, middles);
        for (int chain = 0; chain < 2; ++chain) {
          const auto empty = std::vector<Kept>{};
          auto samples = [&](const Collected& r) -> const std::vector<Kept>& {
            auto it = r.samples.find(chain);
            return it == r.samples.end() ? empty : it->second;
          };
          ASSERT_EQ(rest.outcome.chains[static_cast<std::size_t>(chain)].end, ChainEnd::kCompleted)
              << what;
          expect_joined_equal(samples(first), finals[static_cast<std::size_t>(chain)].kept,
                              samples(rest), samples(whole),
                              what + ", chain " + std::to_string(chain) + ", from the stop");
          expect_joined_equal(
              samples(first), middles[static_cast<std::size_t>(chain)].kept, samples(from_middle),
              samples(whole),
              what + ", chain " + std::to_string(chain) + ", from step " +
                  std::to_string(middles[static_cast<std::size_t>(chain)].next_step));
          // The resumed run ends in the same state as the uninterrupted one.
          EXPECT_EQ(rest.outcome.chains[static_cast<std::size_t>(chain)].checkpoint.state,
                    whole.outcome.chains[static_cast<std::size_t>(chain)].checkpoint.state)
              << what;
        }
      }
    }
  }
}

// Checks ChainHooks' ordering guarantee on one chain's event list: "" when it holds,
// else what broke.
std::string ordering_error(const std::vector<Event>& events) {
  std::int64_t last_step = -1;      // of traces and samples
  std::int64_t last_boundary = -1;  // next_step of the last checkpoint
  for (std::size_t i = 0; i < events.size(); ++i) {
    const Event& e = events[i];
    const std::string at = "event " + std::to_string(i) + ": ";
    if (e.kind == Event::kCheckpoint) {
      // Everything of steps < next_step came before, nothing of later steps.
      if (e.step < last_step + 1) return at + "checkpoint before the rows of its steps";
      if (e.step < last_boundary) return at + "checkpoint going backwards";
      if (e.cause == CheckpointCause::kKeptSample) {
        if (i == 0 || events[i - 1].kind != Event::kSample || e.step != events[i - 1].step + 1 ||
            e.kept != events[i - 1].kept + 1) {
          return at + "a kept-sample checkpoint must directly follow its sample";
        }
      }
      if (e.cause == CheckpointCause::kEnded && i + 1 != events.size()) {
        return at + "hooks after the final checkpoint";
      }
      last_boundary = e.step;
    } else {
      if (e.step < last_boundary) return at + "a row of a step already checkpointed";
      if (e.step < (e.kind == Event::kTrace ? last_step + 1 : last_step)) {
        return at + "steps out of order";
      }
      last_step = e.step;
    }
  }
  if (events.empty() || events.back().kind != Event::kCheckpoint ||
      events.back().cause != CheckpointCause::kEnded) {
    return "no final checkpoint";
  }
  return "";
}

TEST(ChainCheckpoints, HooksFollowStepOrderAndCheckpointsComeAfterTheirRows) {
  const SmallTable t = make_table({6}, testing::test_seed(62));
  ChainSettings c = layout_for_resume();
  c.chains = 3;
  std::atomic<std::uint64_t> request{0};
  // Requests arrive from the hooks too (a writer would do this when its queue is long).
  const Collected r =
      run(t, Method::kSghmc, c, {.checkpoint_request = &request}, {}, [&](const TraceRow& row) {
        if (row.step % 7 == 0) request.fetch_add(1);
      });
  for (int chain = 0; chain < 3; ++chain) {
    const std::vector<Event>& events = r.events.at(chain);
    EXPECT_EQ(ordering_error(events), "") << "chain " << chain;
    int kept = 0, requested = 0, ended = 0;
    for (const Event& e : events) {
      if (e.kind != Event::kCheckpoint) continue;
      kept += e.cause == CheckpointCause::kKeptSample;
      requested += e.cause == CheckpointCause::kRequested;
      ended += e.cause == CheckpointCause::kEnded;
    }
    EXPECT_EQ(kept, 12) << "one checkpoint after every kept sample";
    EXPECT_EQ(ended, 1);
    EXPECT_GE(requested, 1) << "requests from the hooks were served";
    const ChainCheckpoint& final = r.checkpoints.at(chain).back();
    EXPECT_EQ(final.end, ChainEnd::kCompleted);
    EXPECT_TRUE(final.status.ok());
    EXPECT_EQ(final.next_step, 66);
    EXPECT_EQ(final.kept, 12);
    for (const ChainCheckpoint& cp : r.checkpoints.at(chain)) {
      EXPECT_EQ(cp.end.has_value(), cp.cause == CheckpointCause::kEnded);
    }
  }
  // The checker is not vacuous: a checkpoint placed before the row it claims fails it.
  std::vector<Event> broken = r.events.at(0);
  std::size_t first_sample = 0;
  while (broken[first_sample].kind != Event::kSample) ++first_sample;
  std::swap(broken[first_sample], broken[first_sample + 1]);
  EXPECT_NE(ordering_error(broken), "");
  broken = r.events.at(0);
  broken.push_back({Event::kTrace, 66, 0});
  EXPECT_NE(ordering_error(broken), "");
}

TEST(ChainCheckpoints, ARequestFromAnotherThreadIsServedAtTheNextStep) {
  // Chain 0 pauses inside its trace hook after step 20 (burn-in: nothing is kept there)
  // until another thread has bumped the request counter; its next boundary is step 21,
  // so the requested checkpoint must carry next_step 21, and resuming from it must
  // reproduce the uninterrupted run.
  const SmallTable t = make_table({6}, testing::test_seed(63));
  const ChainSettings c = layout_for_resume();
  std::atomic<std::uint64_t> request{0};
  std::mutex mutex;
  std::condition_variable changed;
  bool asked = false, bumped = false;
  std::thread requester([&] {
    std::unique_lock<std::mutex> lock(mutex);
    changed.wait(lock, [&] { return asked; });
    request.fetch_add(1);
    bumped = true;
    changed.notify_all();
  });
  const Collected r =
      run(t, Method::kRsghmc, c, {.checkpoint_request = &request}, {}, [&](const TraceRow& row) {
        if (row.chain != 0 || row.step != 20) return;
        std::unique_lock<std::mutex> lock(mutex);
        asked = true;
        changed.notify_all();
        changed.wait(lock, [&] { return bumped; });
      });
  requester.join();
  std::vector<const ChainCheckpoint*> requested;
  for (const ChainCheckpoint& cp : r.checkpoints.at(0)) {
    if (cp.cause == CheckpointCause::kRequested) requested.push_back(&cp);
  }
  ASSERT_EQ(requested.size(), 1u) << "one request, served once";
  EXPECT_EQ(requested[0]->next_step, 21);
  EXPECT_EQ(requested[0]->kept, 0);
  EXPECT_FALSE(requested[0]->end.has_value());
  // Chain 1 serves the same request at most once (it may have finished before it).
  int other = 0;
  for (const ChainCheckpoint& cp : r.checkpoints.at(1))
    other += cp.cause == CheckpointCause::kRequested;
  EXPECT_LE(other, 1);

  const Collected whole = run(t, Method::kRsghmc, c);
  const Collected rest =
      run(t, Method::kRsghmc, c, {}, {*requested[0], r.checkpoints.at(1).back()});
  expect_joined_equal({}, 0, rest.samples.at(0), whole.samples.at(0), "from the request");
}

TEST(ChainCheckpoints, AResumeStateWithoutTheBatchPositionIsRefused) {
  const SmallTable t = make_table({}, testing::test_seed(64));
  ChainSettings c = layout_for_resume();
  c.chains = 1;
  std::atomic<bool> stop{false};
  const Collected first = run(t, Method::kSgld, c, {.stop = &stop}, {},
                              [&](const TraceRow& row) { stop = row.step == 40; });
  ChainCheckpoint damaged = first.outcome.chains[0].checkpoint;
  damaged.state.words.erase("model.batch_position");
  const Collected rest = run(t, Method::kSgld, c, {}, {damaged});
  const ChainOutcome& outcome = rest.outcome.chains[0];
  EXPECT_EQ(outcome.end, ChainEnd::kFailed);
  EXPECT_EQ(outcome.status.code(), StatusCode::kCorrupt);
  EXPECT_EQ(outcome.status.message(),
            "resuming chain 0: the model state lacks 'batch_position' (two words: epoch, "
            "cursor); the checkpoint is damaged or was written by a model without minibatches");
  // The final checkpoint hands the given state back, so a writer storing it loses nothing.
  ASSERT_EQ(rest.checkpoints.at(0).size(), 1u);
  EXPECT_EQ(rest.checkpoints.at(0)[0].next_step, 41);
  EXPECT_EQ(rest.checkpoints.at(0)[0].state, damaged.state);
  EXPECT_EQ(rest.checkpoints.at(0)[0].end, ChainEnd::kFailed);
  // A position outside the table is refused by the iterator's seek.
  damaged = first.outcome.chains[0].checkpoint;
  damaged.state.words["model.batch_position"] = {3, 201};
  const Collected beyond = run(t, Method::kSgld, c, {}, {damaged});
  EXPECT_EQ(beyond.outcome.chains[0].status.code(), StatusCode::kCorrupt);
  EXPECT_NE(beyond.outcome.chains[0].status.message().find(
                "restoring the minibatch position: batch position (epoch 3, cursor 201) is "
                "outside a table of 200 rows"),
            std::string::npos)
      << beyond.outcome.chains[0].status.message();
}

TEST(ChainCheckpoints, TheStepLoopAllocatesNothingBetweenCheckpoints) {
  // One chain with TablePotential minibatches and every hook set. Counted windows: steps
  // 11..90 (burn-in) and 126..147 (between the kept samples of steps 124 and 149). The
  // window 149..152 around the kept step 149 must see the checkpoint's allocations (the
  // counter works inside the chain).
  const SmallTable t = make_table({6}, testing::test_seed(65));
  ChainSettings c;
  c.chains = 1;
  c.threads = 1;
  c.burn_in = 100;
  c.thin = 25;
  c.samples = 4;
  c.seed = testing::test_seed(66);
  for (Method m : kMethods) {
    std::atomic<std::uint64_t> request{0};
    std::atomic<bool> stop{false};
    long burn_in = -1, sampling = -1, around_checkpoint = -1, blas = 0;
    auto start = [&] {
      g_mallocs = 0;
      g_blas_mallocs = 0;
      g_counting = true;
    };
    auto finish = [&](long& into) {
      g_counting = false;
      into = g_mallocs.load();
      blas += g_blas_mallocs.load();
    };
    ChainHooks hooks;
    double sink = 0;
    hooks.on_trace = [&](const TraceRow& row) {
      if (row.step == 10 || row.step == 125 || row.step == 148) start();
      if (row.step == 90) finish(burn_in);
      if (row.step == 147) finish(sampling);
      if (row.step == 152) finish(around_checkpoint);
    };
    hooks.on_sample = [&](const KeptSample& k) { sink += k.theta[0]; };
    hooks.on_checkpoint = [&](const ChainCheckpoint& cp) { sink += static_cast<double>(cp.kept); };
    auto factory = [&](int) -> std::unique_ptr<PotentialFn> {
      return std::move(
          *TablePotential::create(t.rows, t.layout, t.prior, {}, {.batch_rows = kBatch}, 9));
    };
    auto init = [&](int, ThetaRef theta) {
      initialize_params<float>(theta, t.layout, 4);
      return Status::ok_status();
    };
    Result<RunOutcome> r = run_chains(settings_for(m), c, t.layout.num_params, factory, init, hooks,
                                      {.stop = &stop, .checkpoint_request = &request});
    g_counting = false;
    ASSERT_TRUE(r.ok() && r->status.ok()) << method_name(m);
    EXPECT_EQ(burn_in, 0) << method_name(m) << ": steps 11-90";
    EXPECT_EQ(sampling, 0) << method_name(m) << ": steps 126-147";
    EXPECT_GT(around_checkpoint, 0) << method_name(m) << ": the counter missed a checkpoint";
    std::printf(
        "[ measured ] %-7s allocations in 102 counted steps: %ld (OpenBLAS: %ld); "
        "around one checkpoint: %ld\n",
        std::string(method_name(m)).c_str(), burn_in + sampling, blas, around_checkpoint);
  }
}

}  // namespace
}  // namespace credence
