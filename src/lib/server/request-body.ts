/**
 * A request body handed to code that may stop reading early (a full disk, a file over the limit).
 * Stopping a web stream cancels it, and cancelling the request cuts the connection, so the client
 * sees a reset instead of our answer. This wrapper reads the rest away instead, up to a bound, and
 * the route waits for that before answering.
 */
export interface DrainingBody {
  body: AsyncIterable<Uint8Array>;
  /** Resolves once the unread rest of the body has been read and dropped (at once when nothing is left). */
  drained(): Promise<void>;
}

/** Wraps `stream`; after an early stop at most `maxRestBytes` more are read before the connection is given up. */
export function drainingBody(stream: ReadableStream<Uint8Array>, maxRestBytes: number): DrainingBody {
  const reader = stream.getReader();
  let rest: Promise<void> = Promise.resolve();
  const body = {
    async *[Symbol.asyncIterator]() {
      let finished = false;
      try {
        for (;;) {
          const { done, value } = await reader.read();
          if (done) {
            finished = true;
            return;
          }
          yield value;
        }
      } finally {
        if (!finished) {
          rest = (async () => {
            let bytes = 0;
            for (;;) {
              const { done, value } = await reader.read();
              if (done) return;
              bytes += value.byteLength;
              if (bytes > maxRestBytes) {
                await reader.cancel();
                return;
              }
            }
          })().catch(() => undefined);
        }
      }
    },
  };
  return { body, drained: () => rest };
}
