#include "storage/status.h"

#include <gtest/gtest.h>

namespace unseen {
namespace {

TEST(StatusTest, OkIsCheapAndPrintsOk) {
  Status s;
  EXPECT_TRUE(s.ok());
  EXPECT_EQ(s.ToString(), "OK");
  EXPECT_EQ(s.code(), StatusCode::kOk);
}

TEST(StatusTest, ErrorCarriesCodeAndMessage) {
  Status s = Status::Corruption("entry 3: hash mismatch");
  EXPECT_FALSE(s.ok());
  EXPECT_TRUE(s.IsCorruption());
  EXPECT_EQ(s.ToString(), "Corruption: entry 3: hash mismatch");
  Status copy = s;
  EXPECT_EQ(copy.message(), "entry 3: hash mismatch");
}

TEST(StatusTest, CodesAreStableOnDisk) {
  // These numbers are written to the ledger; they must never change.
  EXPECT_EQ(static_cast<int>(StatusCode::kInvalidArgument), 1);
  EXPECT_EQ(static_cast<int>(StatusCode::kCorruption), 5);
  EXPECT_EQ(static_cast<int>(StatusCode::kWrongKey), 9);
  EXPECT_EQ(static_cast<int>(StatusCode::kInternal), 10);
}

Result<int> Half(int x) {
  if (x % 2) return Status::InvalidArgument("odd");
  return x / 2;
}

Result<int> Quarter(int x) {
  UNSEEN_ASSIGN_OR_RETURN(int h, Half(x));
  return Half(h);
}

TEST(ResultTest, PropagatesErrorsAndValues) {
  EXPECT_EQ(*Quarter(8), 2);
  EXPECT_TRUE(Quarter(6).status().IsInvalidArgument());
}

}  // namespace
}  // namespace unseen
