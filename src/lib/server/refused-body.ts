import type { Server } from 'node:http';

/**
 * After a 413 the connection closes (the middleware sets `connection: close`), but a client still
 * sending its body would then get a reset, and a reset can throw away our answer before the client
 * reads it. So the server lingers: it reads and drops what keeps coming (never keeping it) for at
 * most `maxBytes` or `maxMs`, long enough for a client to see the 413 and stop, then closes.
 */
export function lingerAfterRefusals(server: Server, maxBytes = 8 * 1024 * 1024, maxMs = 2000): void {
  server.on('request', (req, res) => {
    res.once('finish', () => {
      if (res.statusCode !== 413 || req.complete) return;
      const socket = req.socket;
      // Node ends a `connection: close` answer with destroySoon(), whose destroy at 'finish' is what resets.
      socket.removeListener('finish', socket.destroy);
      let dropped = 0;
      const cut = () => socket.destroy();
      const timer = setTimeout(cut, maxMs);
      timer.unref();
      socket.once('close', () => clearTimeout(timer));
      req.on('data', (chunk: Buffer) => {
        dropped += chunk.length;
        if (dropped > maxBytes) cut();
      });
      req.once('end', cut);
      req.resume();
    });
  });
}
