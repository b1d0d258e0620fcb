// FingerprintMap: a flat open-addressing hash map from 64-bit fingerprints to a
// small value. Fingerprints are already XXH3 outputs, so their low bits index the
// table directly (no re-hashing); linear probing, load factor <= 2/3.
//
// Thread safety: concurrent Find on a map nobody modifies is safe; Insert is not.
#ifndef TIDEMARK_SRC_COMMON_FINGERPRINT_MAP_H_
#define TIDEMARK_SRC_COMMON_FINGERPRINT_MAP_H_

#include <bit>
#include <cstddef>
#include <cstdint>
#include <vector>

namespace tidemark {

template <typename V>
class FingerprintMap {
 public:
  explicit FingerprintMap(size_t expected = 16) {
    Rehash(std::bit_ceil(expected + expected / 2 + 16));
  }

  /// The value for `fp`, inserted as V{} if absent.
  V& operator[](uint64_t fp) {
    if ((size_ + 1) * 3 > slots_.size() * 2) Rehash(slots_.size() * 2);  // load <= 2/3
    size_t i = fp & mask_;
    while (true) {
      Slot& s = slots_[i];
      if (!s.used) {
        s.used = true;
        s.key = fp;
        ++size_;
        return s.value;
      }
      if (s.key == fp) return s.value;
      i = (i + 1) & mask_;
    }
  }

  /// Pointer to the value, or nullptr.
  const V* Find(uint64_t fp) const {
    size_t i = fp & mask_;
    while (true) {
      const Slot& s = slots_[i];
      if (!s.used) return nullptr;
      if (s.key == fp) return &s.value;
      i = (i + 1) & mask_;
    }
  }
  V* Find(uint64_t fp) { return const_cast<V*>(static_cast<const FingerprintMap*>(this)->Find(fp)); }

  size_t size() const { return size_; }

  /// Calls f(key, value) for every entry, in table order.
  template <typename F>
  void ForEach(F&& f) const {
    for (const Slot& s : slots_) {
      if (s.used) f(s.key, s.value);
    }
  }

 private:
  struct Slot {
    uint64_t key = 0;
    V value{};
    bool used = false;
  };

  void Rehash(size_t n) {
    std::vector<Slot> old;
    old.swap(slots_);
    slots_.assign(n, Slot{});
    mask_ = n - 1;
    size_ = 0;
    for (Slot& s : old) {
      if (s.used) (*this)[s.key] = s.value;
    }
  }

  std::vector<Slot> slots_;
  size_t mask_ = 0;
  size_t size_ = 0;
};

}  // namespace tidemark

#endif  // TIDEMARK_SRC_COMMON_FINGERPRINT_MAP_H_
