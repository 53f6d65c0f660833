/// <reference path="../.astro/types.d.ts" />

declare namespace App {
  interface Locals {
    /** Services for this process (database, auth, mailer, configuration). */
    app: import('./server/context').AppServices;
    /** The signed-in person, or null. Set by src/middleware.ts; authorisation happens in handlers. */
    actor: import('./server/context').Actor | null;
    /** How the actor was identified: a session cookie, or a personal API token (bearer). */
    authMethod: 'session' | 'token' | null;
    /** The client's address: the connection's peer, or X-Forwarded-For from a trusted proxy (src/adapters/client-address.ts). */
    clientAddress: string;
  }
}
