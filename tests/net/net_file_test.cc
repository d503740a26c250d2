// Tests of the net-file parser, the canonical writer and the options-built spec.
#include <gtest/gtest.h>

#include <string>
#include <vector>

#include "credence/net.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

std::string example(const char* name) { return std::string(CREDENCE_SOURCE_DIR) + "/nets/" + name; }

TEST(NetFile, ShippedExamplesParse) {
  Result<NetSpec> linear = read_net_file(example("linear.net"));
  ASSERT_TRUE(linear.ok()) << linear.status().to_string();
  EXPECT_TRUE(linear->hidden.empty());
  EXPECT_EQ(linear->prior, PriorSpec{});

  Result<NetSpec> small = read_net_file(example("small.net"));
  ASSERT_TRUE(small.ok()) << small.status().to_string();
  const std::vector<HiddenLayerSpec> two_relu = {{32, Activation::kRelu},
                                                 {32, Activation::kRelu}};
  EXPECT_EQ(small->hidden, two_relu);

  Result<NetSpec> wide = read_net_file(example("wide.net"));
  ASSERT_TRUE(wide.ok()) << wide.status().to_string();
  ASSERT_EQ(wide->hidden.size(), 2u);
  EXPECT_EQ(wide->hidden[1].activation, Activation::kTanh);
  EXPECT_EQ(wide->prior.weight_scale, 1.5);
  ASSERT_EQ(wide->prior.overrides.size(), 1u);
  EXPECT_EQ(wide->prior.overrides[0].layer, 2);  // "output" with two hidden layers
  EXPECT_EQ(wide->prior.overrides[0].weight_scale, 0.5);
  EXPECT_EQ(wide->prior.overrides[0].bias_scale, 2.0);
}

TEST(NetFile, ReadsEveryStatementAndComment) {
  const char* text =
      "  # leading comment\r\n"
      "credence-net 1   # version\n"
      "\n"
      "hidden\t8 softplus\n"
      "hidden 4 sigmoid\n"
      "hidden 3 identity\n"
      "prior gaussian bias_scale=0.25 fan_in=off scale=2e-1\n"
      "layer_prior 2 bias_scale=3\n"
      "layer_prior 1 scale=0.5\n";
  Result<NetSpec> spec = parse_net_text(text, "t.net");
  ASSERT_TRUE(spec.ok()) << spec.status().to_string();
  ASSERT_EQ(spec->hidden.size(), 3u);
  EXPECT_EQ(spec->hidden[0], (HiddenLayerSpec{8, Activation::kSoftplus}));
  EXPECT_EQ(spec->hidden[2], (HiddenLayerSpec{3, Activation::kIdentity}));
  EXPECT_FALSE(spec->prior.fan_in_scaling);
  EXPECT_EQ(spec->prior.weight_scale, 0.2);
  EXPECT_EQ(spec->prior.bias_scale, 0.25);
  ASSERT_EQ(spec->prior.overrides.size(), 2u);
  EXPECT_EQ(spec->prior.overrides[0].layer, 1);
  EXPECT_FALSE(spec->prior.overrides[0].weight_scale.has_value());
  EXPECT_EQ(spec->prior.overrides[1].layer, 0);
}

TEST(NetFile, CanonicalTextReadsBackEqual) {
  for (const char* name : {"linear.net", "small.net", "wide.net"}) {
    Result<NetSpec> spec = read_net_file(example(name));
    ASSERT_TRUE(spec.ok());
    Result<NetSpec> again = parse_net_text(format_net_spec(*spec), "canonical");
    ASSERT_TRUE(again.ok()) << again.status().to_string();
    EXPECT_EQ(*again, *spec) << format_net_spec(*spec);
  }
}

// scale=auto (docs/methods.md section 15): the learned scale, its hyperprior settings, the
// canonical text round trip, and the default without a prior line.
TEST(NetFile, LearnedScaleSettings) {
  Result<NetSpec> spec = parse_net_text(
      "credence-net 1\nhidden 4 relu\nprior gaussian scale=auto shape=2 rate=matched every=0.5\n",
      "auto.net");
  ASSERT_TRUE(spec.ok()) << spec.status().to_string();
  EXPECT_TRUE(spec->prior.learn_scale);
  EXPECT_EQ(spec->prior.weight_scale, 1.0);
  EXPECT_EQ(spec->prior.hyper_shape, 2.0);
  EXPECT_FALSE(spec->prior.hyper_rate.has_value());
  EXPECT_EQ(spec->prior.gibbs_passes, 0.5);
  Result<NetSpec> again = parse_net_text(format_net_spec(*spec), "canonical");
  ASSERT_TRUE(again.ok()) << again.status().to_string();
  EXPECT_EQ(*again, *spec) << format_net_spec(*spec);

  Result<NetSpec> bare = parse_net_text("credence-net 1\nhidden 4 relu\n", "bare.net");
  ASSERT_TRUE(bare.ok());
  EXPECT_TRUE(bare->prior.learn_scale);
  EXPECT_EQ(bare->prior.hyper_rate, 1.0);

  Result<NetSpec> fixed = parse_net_text("credence-net 1\nprior gaussian rate=2\n", "f.net");
  ASSERT_FALSE(fixed.ok());
  EXPECT_NE(fixed.status().message().find("without scale=auto"), std::string::npos)
      << fixed.status().message();
  EXPECT_FALSE(parse_net_text("credence-net 1\nprior gaussian scale=auto shape=0\n", "z").ok());
}

// `--hidden 32,32 --activation relu` builds the structure of nets/small.net.
TEST(NetFile, OptionsBuildTheSameSpecAsTheFile) {
  const std::vector<Index> widths = {32, 32};
  Result<NetSpec> from_options = net_spec_from_options(widths, "relu");
  ASSERT_TRUE(from_options.ok());
  EXPECT_EQ(*from_options, *read_net_file(example("small.net")));
  Result<NetSpec> none = net_spec_from_options({}, "relu");
  ASSERT_TRUE(none.ok());
  EXPECT_EQ(*none, *read_net_file(example("linear.net")));

  const std::vector<Index> zero = {16, 0};
  Result<NetSpec> bad_width = net_spec_from_options(zero, "tanh");
  ASSERT_FALSE(bad_width.ok());
  EXPECT_EQ(bad_width.status().message(), "hidden layer 2: width 0 is outside 1..1048576");
  Result<NetSpec> bad_activation = net_spec_from_options(widths, "gelu");
  ASSERT_FALSE(bad_activation.ok());
  EXPECT_EQ(bad_activation.status().code(), StatusCode::kInvalidInput);
  EXPECT_NE(bad_activation.status().message().find("'gelu'"), std::string::npos);
}

struct Malformed {
  const char* what;
  const char* text;
  const char* message;  // the whole expected message
};

// Each message names file:line:column, what was found and what was expected.
TEST(NetFile, MalformedFilesNameLineColumnFoundAndExpected) {
  const Malformed cases[] = {
      {"unknown activation", "credence-net 1\nhidden 8 gelu\n",
       "bad.net:2:10: found 'gelu', expected an activation: relu, tanh, sigmoid, softplus or "
       "identity"},
      {"width zero", "credence-net 1\nhidden 0 relu\n",
       "bad.net:2:8: found '0', expected a layer width: a whole number of units from 1 to "
       "1048576"},
      {"negative scale", "credence-net 1\nprior gaussian scale=-1\n",
       "bad.net:2:22: found '-1', expected a positive number or auto after scale="},
      {"unknown keyword", "credence-net 1\nlayer 8 relu\n",
       "bad.net:2:1: found 'layer', expected a statement: hidden, prior, layer_prior or "
       "linear_path"},
      {"linear path switch", "credence-net 1\nhidden 8 relu\nlinear_path yes\n",
       "bad.net:3:13: found 'yes', expected on or off"},
      {"two linear paths", "credence-net 1\nlinear_path on\nlinear_path off\n",
       "bad.net:3:1: found 'linear_path', expected one linear_path line (the first is on line "
       "2)"},
      {"missing version", "# no version\nhidden 8 relu\n",
       "bad.net:2:1: found 'hidden', expected the version line 'credence-net 1' before "
       "anything else"},
      {"empty file", "# only a comment\n\n",
       "bad.net:1:1: found no statement (only blank lines and comments), expected the version "
       "line 'credence-net 1'"},
      {"wrong version", "credence-net 2\n",
       "bad.net:1:14: found '2', expected the format version 1 (this build reads credence-net 1 "
       "files)"},
      {"bad number", "credence-net 1\nprior gaussian bias_scale=1.5x\n",
       "bad.net:2:27: found '1.5x', expected a positive number after bias_scale="},
      {"width not whole", "credence-net 1\nhidden 6.5 relu\n",
       "bad.net:2:8: found '6.5', expected a layer width: a whole number of units from 1 to "
       "1048576"},
      {"duplicate prior", "credence-net 1\nprior gaussian\nhidden 4 relu\nprior gaussian\n",
       "bad.net:4:1: found 'prior', expected one prior line (the first is on line 2)"},
      {"duplicate version", "credence-net 1\ncredence-net 1\n",
       "bad.net:2:1: found 'credence-net', expected one version line (the first is on line 1)"},
      {"missing activation", "credence-net 1\nhidden 8   # no activation\n",
       "bad.net:2:12: found end of line, expected an activation: relu, tanh, sigmoid, softplus "
       "or identity"},
      {"extra token", "credence-net 1\nhidden 8 relu 3\n",
       "bad.net:2:15: found '3', expected end of line"},
      {"unknown family", "credence-net 1\nprior laplace scale=1\n",
       "bad.net:2:7: found 'laplace', expected a prior family: gaussian"},
      {"unknown setting", "credence-net 1\nprior gaussian sigma=1\n",
       "bad.net:2:16: found 'sigma=1', expected a setting KEY=VALUE with KEY one of scale, "
       "fan_in, bias_scale, shape, rate, every"},
      {"bad switch", "credence-net 1\nprior gaussian fan_in=yes\n",
       "bad.net:2:23: found 'yes', expected on or off after fan_in="},
      {"repeated setting", "credence-net 1\nprior gaussian scale=1 scale=2\n",
       "bad.net:2:24: found 'scale=2', expected each setting once per line"},
      {"empty value", "credence-net 1\nprior gaussian scale=\n",
       "bad.net:2:22: found nothing after '=', expected a value for scale"},
      {"layer out of range", "credence-net 1\nhidden 4 relu\nlayer_prior 3 scale=1\n",
       "bad.net:3:13: found layer 3, expected a layer from 1 to 2 (the network has 1 hidden "
       "layers and the output)"},
      {"two overrides", "credence-net 1\nlayer_prior output scale=1\nlayer_prior 1 bias_scale=2\n",
       "bad.net:3:13: found a second layer_prior for layer 1, expected one per layer (the first "
       "is on line 2)"},
      {"override without setting", "credence-net 1\nlayer_prior 1\n",
       "bad.net:2:14: found end of line, expected a setting: scale=NUMBER or bias_scale=NUMBER"},
      {"infinite scale", "credence-net 1\nprior gaussian scale=inf\n",
       "bad.net:2:22: found 'inf', expected a positive number or auto after scale="},
  };
  for (const Malformed& c : cases) {
    Result<NetSpec> spec = parse_net_text(c.text, "bad.net");
    ASSERT_FALSE(spec.ok()) << c.what;
    EXPECT_EQ(spec.status().code(), StatusCode::kInvalidInput) << c.what;
    EXPECT_EQ(spec.status().message(), c.message) << c.what;
  }
}

TEST(NetFile, ReadNetFileNamesThePath) {
  testing::TempDir dir;
  const std::string path = dir.write("broken.net", "credence-net 1\nhidden -4 relu\n");
  Result<NetSpec> spec = read_net_file(path);
  ASSERT_FALSE(spec.ok());
  EXPECT_EQ(spec.status().message().rfind(path + ":2:8: found '-4'", 0), 0u)
      << spec.status().message();
  Result<NetSpec> missing = read_net_file(dir.path() / "absent.net");
  ASSERT_FALSE(missing.ok());
  // A wrong path is the user's to fix (exit 2, DESIGN.md section 7), like a missing CSV.
  EXPECT_EQ(missing.status().code(), StatusCode::kInvalidInput);
  EXPECT_NE(missing.status().message().find("no such file"), std::string::npos);
}

TEST(ParamLayout, OffsetsFollowTheDocumentedOrder) {
  const std::vector<Index> widths = {4, 3};
  Result<ParamLayout> layout = resolve_layout(*net_spec_from_options(widths, "tanh"), 5, 2);
  ASSERT_TRUE(layout.ok());
  ASSERT_EQ(layout->layers.size(), 3u);
  // W1 (4x5) b1 (4) W2 (3x4) b2 (3) W3 (2x3) b3 (2).
  EXPECT_EQ(layout->layers[0], (LayerLayout{5, 4, Activation::kTanh, 0, 20}));
  EXPECT_EQ(layout->layers[1], (LayerLayout{4, 3, Activation::kTanh, 24, 36}));
  EXPECT_EQ(layout->layers[2], (LayerLayout{3, 2, Activation::kIdentity, 39, 45}));
  EXPECT_EQ(layout->num_params, 47);
  EXPECT_EQ(layout->max_width(), 4);

  // With the linear path: the same chain, then W_lin (2x5) b_lin (2) after the output
  // layer (nets/README.md, "The flat parameter vector").
  NetSpec linear = *net_spec_from_options(widths, "tanh");
  linear.linear_path = true;
  Result<ParamLayout> with_path = resolve_layout(linear, 5, 2);
  ASSERT_TRUE(with_path.ok());
  ASSERT_EQ(with_path->layers.size(), 4u);
  EXPECT_TRUE(with_path->linear_path);
  EXPECT_EQ(with_path->chain_size(), 3u);
  EXPECT_EQ(with_path->layers[2], layout->layers[2]);
  EXPECT_EQ(with_path->layers[3], (LayerLayout{5, 2, Activation::kIdentity, 47, 57}));
  EXPECT_EQ(with_path->num_params, 59);
  // Without hidden layers the output layer is the linear model: no second one.
  NetSpec bare;
  bare.linear_path = true;
  Result<ParamLayout> bare_layout = resolve_layout(bare, 5, 2);
  ASSERT_TRUE(bare_layout.ok());
  EXPECT_FALSE(bare_layout->linear_path);
  EXPECT_EQ(bare_layout->num_params, 12);
  // The switch reads back from the canonical text.
  Result<NetSpec> again = parse_net_text(format_net_spec(linear), "canonical");
  ASSERT_TRUE(again.ok()) << again.status().to_string();
  EXPECT_EQ(*again, linear) << format_net_spec(linear);
  EXPECT_NE(format_net_spec(linear).find("linear_path on\n"), std::string::npos);

  Result<ParamLayout> one_class = resolve_layout(NetSpec{}, 5, 1);
  ASSERT_FALSE(one_class.ok());
  EXPECT_NE(one_class.status().message().find("at least 2"), std::string::npos);
  EXPECT_FALSE(resolve_layout(NetSpec{}, 0, 3).ok());
}

}  // namespace
}  // namespace credence
