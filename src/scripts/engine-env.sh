#!/bin/sh
# Runs a command of the image engine (`npm run correct`, `npm run worker`) with jemalloc, when
# Debian's libjemalloc2 is installed, set to keep the memory of a finished scan for the next one:
# a 3600x2400 scan decodes into 26 MB, and a fresh 26 MB costs about 6,000 page faults (10-20 ms of
# system time per scan here) when the allocator has handed the last one back to the system. One
# arena, because libvips allocates on its own threads and the pixels are freed on JavaScript's.
# Memory is then kept at its high-water mark (two scans' pixels) instead of shrinking between
# scans. src/scripts/processes.ts sets the same for the worker that `npm start` runs.
lib=/usr/lib/x86_64-linux-gnu/libjemalloc.so.2
if [ -e "$lib" ]; then
  LD_PRELOAD="$lib${LD_PRELOAD:+:$LD_PRELOAD}"
  MALLOC_CONF="narenas:1,dirty_decay_ms:-1,muzzy_decay_ms:-1"
  export LD_PRELOAD MALLOC_CONF
fi
exec "$@"
