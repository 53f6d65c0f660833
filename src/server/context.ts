// What use cases need from the running app. The web server, seed, tests and (later) the worker
// each build one of these; nothing here touches astro:*.
import type { AppDatabase } from '../db/client';
import type { Auth } from '../adapters/auth';
import type { AppEnv } from '../adapters/env';
import type { Mailer } from '../adapters/mail';
import type { AccountKind } from '../contracts/vocabulary';

export interface AppServices {
  db: AppDatabase;
  env: AppEnv;
  mailer: Mailer;
  auth: Auth;
}

/** The signed-in person as use cases see them. */
export interface Actor {
  id: string;
  name: string;
  email: string;
  kind: AccountKind;
}

/** The Actor of an account row or session user (an unknown kind counts as member). */
export function toActor(u: { id: string; name: string; email: string; kind?: string | null }): Actor {
  const kind = u.kind === 'admin' || u.kind === 'guest' ? u.kind : 'member';
  return { id: u.id, name: u.name, email: u.email, kind };
}
