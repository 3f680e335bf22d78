import type { IncomingMessage } from 'node:http';

/** `::ffff:127.0.0.1` (an IPv4 peer on a dual-stack socket) is 127.0.0.1. */
function plainAddress(address: string): string {
  const a = address.trim();
  return a.toLowerCase().startsWith('::ffff:') && a.includes('.') ? a.slice(7) : a;
}

/**
 * The address of the client behind a request: the peer of the connection, unless that peer is one
 * of `trustedProxies`, in which case the address it put last in X-Forwarded-For is taken, and so on
 * leftwards while those are trusted proxies too. Entries a client wrote itself sit left of the first
 * untrusted address and are never reached.
 */
export function clientAddressOf(peer: string | undefined, forwardedFor: string | string[] | undefined, trustedProxies: readonly string[]): string | undefined {
  if (!peer) return undefined;
  const trusted = new Set(trustedProxies.map(plainAddress));
  const chain = (Array.isArray(forwardedFor) ? forwardedFor.join(',') : (forwardedFor ?? ''))
    .split(',')
    .map((a) => a.trim())
    .filter(Boolean);
  let address = plainAddress(peer);
  while (trusted.has(address) && chain.length) address = plainAddress(chain.pop()!);
  return address;
}

/**
 * Astro takes the client address from the first X-Forwarded-For entry whoever wrote it, so the web
 * server replaces the header with the address worked out above before Astro sees the request.
 */
export function pinClientAddress(req: IncomingMessage, trustedProxies: readonly string[]): void {
  const address = clientAddressOf(req.socket.remoteAddress, req.headers['x-forwarded-for'], trustedProxies);
  if (address) req.headers['x-forwarded-for'] = address;
  else delete req.headers['x-forwarded-for'];
}

/** True for an address of this machine (127.0.0.0/8 or ::1). */
export function isLoopback(address: string | undefined): boolean {
  if (!address) return false;
  const a = plainAddress(address);
  return a === '::1' || /^127\.\d+\.\d+\.\d+$/.test(a);
}
