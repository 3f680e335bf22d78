import { idParam } from '../../../../lib/server/access.ts';
import { batchForCaller, stateCounts } from '../../../../lib/server/batches.ts';
import { apiRoute } from '../../../../lib/server/http.ts';

/** How often the counts are looked at, and how long one stream lasts before the browser reconnects. */
const POLL_MS = 1500;
const STREAM_MS = 5 * 60 * 1000;

/**
 * Server-sent events with a batch's counts per state: one `counts` event at once and another
 * whenever they change. EventSource reconnects by itself after the stream ends.
 */
export const GET = apiRoute(async ({ locals, params, request }) => {
  const batch = await batchForCaller(locals, idParam(params.id, 'That batch'), 'viewer');
  const encoder = new TextEncoder();
  let timer: ReturnType<typeof setTimeout> | undefined;
  let closed = false;
  const started = Date.now();
  const stream = new ReadableStream<Uint8Array>({
    start(controller) {
      let last = '';
      const close = () => {
        if (closed) return;
        closed = true;
        clearTimeout(timer);
        try {
          controller.close();
        } catch {
          /* already closed by the client */
        }
      };
      request.signal.addEventListener('abort', close);
      const tick = async () => {
        if (closed) return;
        try {
          const counts = (await stateCounts([batch.id])).get(batch.id)!;
          const data = JSON.stringify({ batchId: batch.id, counts });
          if (data !== last) {
            last = data;
            controller.enqueue(encoder.encode(`event: counts\ndata: ${data}\n\n`));
          } else {
            controller.enqueue(encoder.encode(': still here\n\n'));
          }
        } catch {
          close();
          return;
        }
        if (Date.now() - started > STREAM_MS) return close();
        timer = setTimeout(tick, POLL_MS);
      };
      controller.enqueue(encoder.encode('retry: 3000\n\n'));
      void tick();
    },
    cancel() {
      closed = true;
      clearTimeout(timer);
    },
  });
  return new Response(stream, { headers: { 'content-type': 'text/event-stream; charset=utf-8', 'cache-control': 'no-store', connection: 'keep-alive' } });
});
