#!/bin/sh
# Runs a command of the image engine (`npm run correct`, `npm run worker`) with jemalloc, when
# Debian's libjemalloc2 is installed, set to keep the memory of a finished scan for the next one:
# a 3600x2400 scan decodes into 26 MB, and a fresh 26 MB costs about 6,000 page faults (10-20 ms of
# system time per scan here) when the allocator has handed the last one back to the system. One
# arena, because libvips allocates on its own threads and the pixels are freed on JavaScript's.
# Memory is then kept at its high-water mark (two scans' pixels) instead of shrinking between
# scans. src/scripts/processes.ts sets the same for the worker that `npm start` runs.
#
#   sh src/scripts/engine-env.sh [--offline] command [args...]
#
# --offline: the command makes no network connection (`npm run correct` only reads and writes
# files), so Node is not handed NODE_EXTRA_CA_CERTS: Node parses every certificate that file names
# at start-up, before any code runs, whether or not a TLS connection is ever made. With Debian's
# whole CA bundle named there (as on the machine this was measured on) that is 50-60 ms of every
# start, about a third of the command line's own start-up.
if [ "${1:-}" = "--offline" ]; then
  shift
  unset NODE_EXTRA_CA_CERTS
fi
lib=/usr/lib/x86_64-linux-gnu/libjemalloc.so.2
if [ -e "$lib" ]; then
  LD_PRELOAD="$lib${LD_PRELOAD:+:$LD_PRELOAD}"
  MALLOC_CONF="narenas:1,dirty_decay_ms:-1,muzzy_decay_ms:-1"
  export LD_PRELOAD MALLOC_CONF
fi
exec "$@"
