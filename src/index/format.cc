#include "index/format.h"

#include <cstdio>

namespace tidemark::index_format {

std::string SegmentDirName(uint32_t segment_id) {
  char buf[32];
  std::snprintf(buf, sizeof(buf), "seg-%06u", segment_id);
  return buf;
}

std::string ShardFileName(uint32_t shard_id) {
  char buf[32];
  std::snprintf(buf, sizeof(buf), "shard-%05u.tms", shard_id);
  return buf;
}

}  // namespace tidemark::index_format
