#include "tidemark/progress.h"

#include <atomic>

namespace tidemark {
namespace {
// Lock-free so that RequestCancel may run inside a signal handler.
std::atomic<bool> g_cancel{false};
static_assert(std::atomic<bool>::is_always_lock_free);
}  // namespace

void RequestCancel() { g_cancel.store(true, std::memory_order_relaxed); }
bool CancelRequested() { return g_cancel.load(std::memory_order_relaxed); }
void ResetCancel() { g_cancel.store(false, std::memory_order_relaxed); }

}  // namespace tidemark
