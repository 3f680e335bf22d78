/// <reference types="astro/client" />

declare namespace App {
  interface Locals {
    requestId: string;
    user: import('./lib/server/access.ts').SignedInUser | null;
    /** How the caller proved who they are. */
    authVia: 'session' | 'token' | null;
    memberships: import('./lib/server/access.ts').ArchiveMembership[];
    /** The archive being worked in (null when the user belongs to none). */
    membership: import('./lib/server/access.ts').ArchiveMembership | null;
  }
}
