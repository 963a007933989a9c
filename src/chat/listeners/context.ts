/** What every listener is handed: the app to register on, and the intake that takes requests in. */
import type { Intake } from '../intake.js';
import type { BoltApp } from '../platform.js';

export interface ListenerContext {
  app: BoltApp;
  intake: Intake;
  /** the bot's own user id (from auth.test), to strip mentions of it */
  botUserId: string | undefined;
}
