// What use cases need from the running app. The web server, seed, tests and (later) the worker
// each build one of these; nothing here touches astro:*.
import type { AppDatabase } from '../db/client';
import type { Auth } from '../lib/auth';
import type { AppEnv } from '../lib/env';
import type { Mailer } from '../lib/mail';
import type { AccountKind } from '../lib/vocabulary';

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
