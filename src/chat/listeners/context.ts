/** What every listener is handed: the app to register on, and the intake that takes requests in. */
import type { Log } from '../../log.js';
import type { LogStore } from '../../verbs/ask.js';
import type { DeliverDeps } from '../deliver.js';
import type { FormMeta } from '../form/view.js';
import type { Intake } from '../intake.js';
import type { BoltApp } from '../platform.js';

export interface ListenerContext {
  app: BoltApp;
  intake: Intake;
  /** the bot's own user id (from auth.test), to strip mentions of it */
  botUserId: string | undefined;
  /** the instance's store, the one the intake records in (null: answering without it), for buttons, the form and my desk */
  store: LogStore | null;
  delivery: DeliverDeps;
  log: Log;
  /** compute units one request may use (the check form's quick check) */
  budget: number;
  /** set by the interactive listeners: opens the check form (the empty `/kolmo`) */
  forms: { open?: (triggerId: string, meta: FormMeta) => Promise<boolean> };
}
