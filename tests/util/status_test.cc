// Status and Result<T>: codes, messages and context.
#include "credence/status.h"

#include <gtest/gtest.h>

namespace credence {
namespace {

TEST(Status, DefaultIsOk) {
  Status s;
  EXPECT_TRUE(s.ok());
  EXPECT_EQ(s.to_string(), "ok");
}

TEST(Status, WithContextPrefixesTheMessage) {
  Status s = Status::corrupt("dataset /samples is missing").with_context("reading run file a.h5");
  EXPECT_EQ(s.code(), StatusCode::kCorrupt);
  EXPECT_EQ(s.message(), "reading run file a.h5: dataset /samples is missing");
}

Result<int> parse_positive(int x) {
  if (x <= 0) return Status::invalid_input("not positive");
  return x;
}

Status chain(int x) {
  CREDENCE_RETURN_IF_ERROR(parse_positive(x).status());
  return Status::ok_status();
}

TEST(Result, HoldsValueOrFailure) {
  EXPECT_EQ(*parse_positive(3), 3);
  EXPECT_FALSE(parse_positive(-1).ok());
  EXPECT_EQ(parse_positive(-1).status().message(), "not positive");
  EXPECT_EQ(chain(-1).code(), StatusCode::kInvalidInput);
  EXPECT_TRUE(chain(2).ok());
}

}  // namespace
}  // namespace credence
