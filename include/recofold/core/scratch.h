// SPDX-License-Identifier: Apache-2.0
// Reusable scratch space for const, thread-safe methods (operators, priors): sized once, then no allocation.
#pragma once

#include <memory>
#include <mutex>

namespace recofold {

// Holds one T (the work buffers of an operator or prior) for reuse by
// successive calls of a const method. borrow() hands the cached T to one
// caller at a time; a caller that arrives while another holds it gets a fresh
// T of its own (allocated, dropped on return), so concurrent calls stay
// correct and the common single-caller case allocates only on first use.
// Copies start empty (a clone of an operator does not share buffers).
//
//   struct Buffers { std::vector<float> grid; };
//   ScratchCache<Buffers> scratch_;
//   auto lease = scratch_.borrow();           // in a const method
//   lease->grid.resize(n);                    // no allocation once sized
template <typename T>
class ScratchCache {
 public:
  ScratchCache() = default;
  ScratchCache(const ScratchCache&) {}
  ScratchCache& operator=(const ScratchCache&) { return *this; }

  class Lease {
   public:
    Lease(const Lease&) = delete;
    Lease& operator=(const Lease&) = delete;
    Lease(Lease&& o) noexcept : owner_(o.owner_), item_(o.item_), own_(std::move(o.own_)) { o.owner_ = nullptr; }
    ~Lease() {
      if (owner_) owner_->give_back();
    }
    T& operator*() const { return *item_; }
    T* operator->() const { return item_; }

   private:
    friend class ScratchCache;
    Lease(const ScratchCache* owner, T* item, std::unique_ptr<T> own)
        : owner_(owner), item_(item), own_(std::move(own)) {}
    const ScratchCache* owner_;  // non-null: item_ is the cached T
    T* item_;
    std::unique_ptr<T> own_;  // a private T when the cached one was busy
  };

  Lease borrow() const {
    {
      std::lock_guard<std::mutex> lock(mutex_);
      if (!busy_) {
        busy_ = true;
        if (!cached_) cached_ = std::make_unique<T>();
        return Lease(this, cached_.get(), nullptr);
      }
    }
    auto own = std::make_unique<T>();
    T* p = own.get();
    return Lease(nullptr, p, std::move(own));
  }

 private:
  void give_back() const {
    std::lock_guard<std::mutex> lock(mutex_);
    busy_ = false;
  }
  mutable std::mutex mutex_;
  mutable std::unique_ptr<T> cached_;
  mutable bool busy_ = false;
};

}  // namespace recofold
