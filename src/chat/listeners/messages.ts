/**
 * Direct messages to the app: answered in that conversation, logged in the person's private log.
 * Like a mention, a direct message is recorded in the shared request queue before Bolt
 * acknowledges it (intake.recordFirst reads it off the delivery), so a re-sent delivery is
 * answered once whichever instance gets it, and any instance may answer it.
 */
import type { RetryInfo } from '../intake.js';
import type { ListenerContext } from './context.js';

export function registerMessages({ app, intake }: ListenerContext): void {
  app.event('message', async ({ body, context }) => {
    // only what intake.recordFirst recorded (a person's direct message) goes any further
    intake.after(body, context as RetryInfo);
  });
}
