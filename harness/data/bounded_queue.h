// BoundedQueue<T>: a first-in, first-out queue through which threads hand items to one another.
// Producers Push() and consumers Pop(); Push() blocks while `capacity` items are queued, Pop()
// while none is. Close() ends the hand-off: later pushes fail, and consumers take what is still
// queued and then get std::nullopt. Either side may close it, so that neither waits forever when
// the other stops early. Every method is thread-safe.
//
//   BoundedQueue<std::unique_ptr<Batch>> queue(2);
//   std::thread consumer([&] {
//     while (std::optional<std::unique_ptr<Batch>> b = queue.Pop()) Process(**b);
//   });
//   for (...) {
//     if (!queue.Push(MakeBatch())) break;  // closed: the consumer gave up
//   }
//   queue.Close();  // the consumer drains the queue, then its Pop() returns std::nullopt
//   consumer.join();
#ifndef UNSEEN_HARNESS_DATA_BOUNDED_QUEUE_H_
#define UNSEEN_HARNESS_DATA_BOUNDED_QUEUE_H_

#include <condition_variable>
#include <cstddef>
#include <deque>
#include <limits>
#include <mutex>
#include <optional>
#include <utility>

namespace unseen {

template <typename T>
class BoundedQueue {
 public:
  // For a queue that something else bounds, such as a fixed number of items that circulate
  // between two queues: Push() then never blocks.
  static constexpr size_t kNoLimit = std::numeric_limits<size_t>::max();

  // An open, empty queue that holds at most `capacity` items (a capacity of 0 counts as 1).
  explicit BoundedQueue(size_t capacity) : capacity_(capacity > 0 ? capacity : 1) {}
  // Destroys the items still queued. REQUIRES: no thread is in, or will enter, a method of this
  // queue (join the threads that use it first); whether it was closed does not matter.
  ~BoundedQueue() = default;
  BoundedQueue(const BoundedQueue&) = delete;
  BoundedQueue& operator=(const BoundedQueue&) = delete;

  // Appends `item`, first waiting while capacity() items are queued. Returns true once it is
  // queued, or false, dropping `item`, when the queue is closed before there is room (an item is
  // never queued after Close()).
  bool Push(T item) {
    {
      std::unique_lock<std::mutex> lock(mu_);
      not_full_.wait(lock, [this] { return closed_ || items_.size() < capacity_; });
      if (closed_) return false;
      items_.push_back(std::move(item));
    }
    // Outside the lock, so that the consumer woken does not block on it at once. Safe: this
    // thread is still in a method, so the queue may not be destroyed yet (see the destructor).
    not_empty_.notify_one();
    return true;
  }

  // Removes and returns the oldest item, first waiting while the queue is empty and open.
  // Returns std::nullopt once the queue is closed and empty: items pushed before Close() are
  // all returned first.
  std::optional<T> Pop() {
    std::optional<T> item;
    {
      std::unique_lock<std::mutex> lock(mu_);
      not_empty_.wait(lock, [this] { return closed_ || !items_.empty(); });
      if (items_.empty()) return std::nullopt;
      item.emplace(std::move(items_.front()));
      items_.pop_front();
    }
    not_full_.notify_one();
    return item;
  }

  // Removes and returns the oldest item if there is one, else std::nullopt; never blocks.
  // Open or closed alike.
  std::optional<T> TryPop() {
    std::optional<T> item;
    {
      std::lock_guard<std::mutex> lock(mu_);
      if (items_.empty()) return std::nullopt;
      item.emplace(std::move(items_.front()));
      items_.pop_front();
    }
    not_full_.notify_one();
    return item;
  }

  // Ends the hand-off: pushes fail from now on, including those waiting for room, and Pop()
  // returns what is queued and then std::nullopt, waking consumers that wait. Items already
  // queued stay until popped or destroyed with the queue. Idempotent.
  void Close() {
    {
      std::lock_guard<std::mutex> lock(mu_);
      closed_ = true;
    }
    not_full_.notify_all();
    not_empty_.notify_all();
  }

  bool closed() const {
    std::lock_guard<std::mutex> lock(mu_);
    return closed_;
  }
  // The items queued now; another thread may change it at once.
  size_t size() const {
    std::lock_guard<std::mutex> lock(mu_);
    return items_.size();
  }
  size_t capacity() const { return capacity_; }

 private:
  const size_t capacity_;
  mutable std::mutex mu_;
  std::condition_variable not_full_;   // waited on by Push()
  std::condition_variable not_empty_;  // waited on by Pop()
  std::deque<T> items_;                // oldest first; guarded by mu_
  bool closed_ = false;                // guarded by mu_
};

}  // namespace unseen

#endif  // UNSEEN_HARNESS_DATA_BOUNDED_QUEUE_H_
