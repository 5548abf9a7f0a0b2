#include "harness/data/bounded_queue.h"

#include <gtest/gtest.h>

#include <atomic>
#include <chrono>
#include <cstdint>
#include <memory>
#include <optional>
#include <random>
#include <thread>
#include <vector>

#include "harness/sampling/random.h"

namespace unseen {
namespace {

using std::chrono::milliseconds;

// Long enough for a thread that is not blocked to get through a Push() or Pop(), even on a busy
// machine. The checks below that use it can only pass wrongly when the machine is slower than
// this, never fail wrongly.
constexpr milliseconds kSettle{100};

TEST(BoundedQueueTest, ItemsComeOutInTheOrderTheyWentIn) {
  BoundedQueue<int> q(8);
  for (int i = 0; i < 8; ++i) ASSERT_TRUE(q.Push(i));
  EXPECT_EQ(q.size(), 8u);
  for (int i = 0; i < 8; ++i) EXPECT_EQ(q.Pop(), std::optional<int>(i));
  EXPECT_EQ(q.size(), 0u);
  EXPECT_EQ(q.TryPop(), std::nullopt);
}

TEST(BoundedQueueTest, MoveOnlyItemsAreHandedOver) {
  BoundedQueue<std::unique_ptr<int>> q(2);
  ASSERT_TRUE(q.Push(std::make_unique<int>(7)));
  std::optional<std::unique_ptr<int>> got = q.Pop();
  ASSERT_TRUE(got.has_value());
  EXPECT_EQ(**got, 7);
}

TEST(BoundedQueueTest, ACapacityOfZeroCountsAsOne) {
  BoundedQueue<int> q(0);
  EXPECT_EQ(q.capacity(), 1u);
  EXPECT_TRUE(q.Push(1));
}

TEST(BoundedQueueTest, PushBlocksAtCapacityUntilAPop) {
  BoundedQueue<int> q(2);
  ASSERT_TRUE(q.Push(1));
  ASSERT_TRUE(q.Push(2));
  std::atomic<bool> pushed{false};
  std::thread producer([&] {
    EXPECT_TRUE(q.Push(3));
    pushed = true;
  });
  std::this_thread::sleep_for(kSettle);
  EXPECT_FALSE(pushed.load()) << "Push() returned while the queue was full";
  EXPECT_EQ(q.size(), 2u);
  EXPECT_EQ(q.Pop(), std::optional<int>(1));
  producer.join();  // would hang if the Pop() did not wake the producer
  EXPECT_TRUE(pushed.load());
  EXPECT_EQ(q.Pop(), std::optional<int>(2));
  EXPECT_EQ(q.Pop(), std::optional<int>(3));
}

TEST(BoundedQueueTest, PopBlocksWhileEmptyUntilAPush) {
  BoundedQueue<int> q(1);
  std::atomic<bool> popped{false};
  std::optional<int> got;
  std::thread consumer([&] {
    got = q.Pop();
    popped = true;
  });
  std::this_thread::sleep_for(kSettle);
  EXPECT_FALSE(popped.load()) << "Pop() returned while the queue was empty and open";
  ASSERT_TRUE(q.Push(5));
  consumer.join();
  EXPECT_EQ(got, std::optional<int>(5));
}

TEST(BoundedQueueTest, CloseWakesABlockedPop) {
  BoundedQueue<int> q(1);
  std::optional<int> got = 0;
  std::thread consumer([&] { got = q.Pop(); });
  std::this_thread::sleep_for(kSettle);
  q.Close();
  consumer.join();
  EXPECT_EQ(got, std::nullopt);
}

TEST(BoundedQueueTest, CloseWakesABlockedPushWhichFailsAndQueuesNothing) {
  BoundedQueue<std::shared_ptr<int>> q(1);
  ASSERT_TRUE(q.Push(std::make_shared<int>(1)));
  auto dropped = std::make_shared<int>(2);
  std::atomic<int> result{-1};
  std::thread producer([&] { result = q.Push(dropped) ? 1 : 0; });
  std::this_thread::sleep_for(kSettle);
  EXPECT_EQ(result.load(), -1) << "Push() returned while the queue was full";
  q.Close();
  producer.join();
  EXPECT_EQ(result.load(), 0);
  EXPECT_EQ(dropped.use_count(), 1) << "the refused item was kept";
  std::optional<std::shared_ptr<int>> first = q.Pop();
  ASSERT_TRUE(first.has_value());
  EXPECT_EQ(**first, 1);
  EXPECT_EQ(q.Pop(), std::nullopt);
}

TEST(BoundedQueueTest, ItemsPushedBeforeCloseAreAllDrained) {
  BoundedQueue<int> q(4);
  for (int i = 0; i < 4; ++i) ASSERT_TRUE(q.Push(i));
  q.Close();
  q.Close();  // idempotent
  EXPECT_TRUE(q.closed());
  EXPECT_FALSE(q.Push(9));
  EXPECT_EQ(q.TryPop(), std::optional<int>(0));
  for (int i = 1; i < 4; ++i) EXPECT_EQ(q.Pop(), std::optional<int>(i));
  EXPECT_EQ(q.Pop(), std::nullopt);
  EXPECT_EQ(q.TryPop(), std::nullopt);
}

TEST(BoundedQueueTest, TryPopNeverBlocks) {
  BoundedQueue<int> q(1);
  EXPECT_EQ(q.TryPop(), std::nullopt);
  ASSERT_TRUE(q.Push(3));
  EXPECT_EQ(q.TryPop(), std::optional<int>(3));
  EXPECT_EQ(q.TryPop(), std::nullopt);
}

TEST(BoundedQueueTest, TryPopMakesRoomForABlockedPush) {
  BoundedQueue<int> q(1);
  ASSERT_TRUE(q.Push(1));
  std::thread producer([&] { EXPECT_TRUE(q.Push(2)); });
  std::this_thread::sleep_for(kSettle);
  EXPECT_EQ(q.TryPop(), std::optional<int>(1));
  producer.join();
  EXPECT_EQ(q.Pop(), std::optional<int>(2));
}

TEST(BoundedQueueTest, ItemsLeftInTheQueueAreDestroyedWithIt) {
  auto item = std::make_shared<int>(1);
  {
    BoundedQueue<std::shared_ptr<int>> q(BoundedQueue<std::shared_ptr<int>>::kNoLimit);
    for (int i = 0; i < 3; ++i) ASSERT_TRUE(q.Push(item));
    EXPECT_EQ(item.use_count(), 4);
  }
  EXPECT_EQ(item.use_count(), 1);
}

// A fresh seed for each run, printed with any failure so that the run can be repeated.
uint64_t FreshSeed() {
  std::random_device device;
  return (uint64_t{device()} << 32) ^ device();
}

// Items are (producer << 32) | sequence number.
uint64_t Item(uint64_t producer, uint64_t seq) { return producer << 32 | seq; }
uint64_t Mix(uint64_t x) { return SplitMix64(x).Next(); }

TEST(BoundedQueueTest, ManyProducersAndConsumersHandOverEveryItemOnceInOrder) {
  const uint64_t seed = FreshSeed();
  SCOPED_TRACE("seed " + std::to_string(seed));
  Random random(seed);
  for (int round = 0; round < 300; ++round) {
    SCOPED_TRACE("round " + std::to_string(round));
    const size_t producers = 1 + random.Bounded(4), consumers = 1 + random.Bounded(4);
    BoundedQueue<uint64_t> q(1 + random.Bounded(8));
    std::vector<uint64_t> counts(producers);
    uint64_t want_count = 0, want_sum = 0, want_hash = 0;
    for (size_t p = 0; p < producers; ++p) {
      counts[p] = random.Bounded(400);
      for (uint64_t i = 0; i < counts[p]; ++i) {
        ++want_count;
        want_sum += Item(p, i);
        want_hash ^= Mix(Item(p, i));
      }
    }
    struct Seen {
      uint64_t count = 0, sum = 0, hash = 0;
      bool in_order = true;  // each producer's items reach this consumer in the order pushed
    };
    std::vector<Seen> seen(consumers);
    std::vector<std::thread> threads;
    for (size_t c = 0; c < consumers; ++c) {
      threads.emplace_back([&q, &s = seen[c], producers] {
        std::vector<int64_t> last(producers, -1);
        while (std::optional<uint64_t> item = q.Pop()) {
          ++s.count;
          s.sum += *item;
          s.hash ^= Mix(*item);
          const size_t p = *item >> 32;
          const int64_t seq = static_cast<int64_t>(*item & 0xffffffffu);
          s.in_order = s.in_order && seq > last[p];
          last[p] = seq;
        }
      });
    }
    std::vector<std::thread> pushers;
    for (size_t p = 0; p < producers; ++p) {
      pushers.emplace_back([&q, p, n = counts[p]] {
        for (uint64_t i = 0; i < n; ++i) EXPECT_TRUE(q.Push(Item(p, i)));
      });
    }
    for (std::thread& t : pushers) t.join();
    q.Close();
    for (std::thread& t : threads) t.join();
    Seen total;
    for (const Seen& s : seen) {
      total.count += s.count;
      total.sum += s.sum;
      total.hash ^= s.hash;
      EXPECT_TRUE(s.in_order);
    }
    ASSERT_EQ(total.count, want_count);
    ASSERT_EQ(total.sum, want_sum);
    ASSERT_EQ(total.hash, want_hash);
  }
}

TEST(BoundedQueueTest, AConsumerThatStopsEarlyReleasesABlockedProducer) {
  BoundedQueue<int> q(2);
  int pushed = 0;
  std::thread producer([&] {
    while (q.Push(pushed)) ++pushed;
  });
  // The consumer fails after three items and closes the queue instead of draining it.
  for (int i = 0; i < 3; ++i) EXPECT_EQ(q.Pop(), std::optional<int>(i));
  q.Close();
  producer.join();  // would hang if the closed queue left the producer blocked
  EXPECT_GE(pushed, 3);
  EXPECT_LE(pushed, 5);  // three popped, at most two more queued
  EXPECT_EQ(q.size(), static_cast<size_t>(pushed - 3));
}

TEST(BoundedQueueTest, ConsumersThatStopEarlyReleaseEveryProducer) {
  const uint64_t seed = FreshSeed();
  SCOPED_TRACE("seed " + std::to_string(seed));
  Random random(seed);
  for (int round = 0; round < 100; ++round) {
    SCOPED_TRACE("round " + std::to_string(round));
    const size_t producers = 1 + random.Bounded(4), consumers = 1 + random.Bounded(3);
    const uint64_t stop_after = random.Bounded(50);  // items the consumers take in all
    BoundedQueue<uint64_t> q(1 + random.Bounded(4));
    // Producers push until refused: the queue never drains by itself.
    std::vector<uint64_t> pushed(producers, 0);
    std::vector<std::thread> threads;
    for (size_t p = 0; p < producers; ++p) {
      threads.emplace_back([&q, &n = pushed[p], p] {
        while (q.Push(Item(p, n))) ++n;
      });
    }
    // Consumers take turns up to stop_after; the one that draws the last turn closes the queue.
    std::atomic<uint64_t> turns{0}, popped{0};
    for (size_t c = 0; c < consumers; ++c) {
      threads.emplace_back([&q, &turns, &popped, stop_after] {
        while (turns.fetch_add(1) < stop_after) {
          if (!q.Pop()) return;  // closed by another consumer, and empty
          ++popped;
        }
        q.Close();
      });
    }
    for (std::thread& t : threads) t.join();
    uint64_t total = 0;
    for (uint64_t n : pushed) total += n;
    // Every accepted item was either popped or is still queued.
    EXPECT_EQ(total, popped.load() + q.size());
    EXPECT_LE(popped.load(), stop_after);
    EXPECT_LE(q.size(), q.capacity());
  }
}

}  // namespace
}  // namespace unseen
