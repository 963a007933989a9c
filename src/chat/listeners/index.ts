/**
 * The app's listeners, registered by kind: commands, events, and the interactive ones (the
 * buttons under answers, the check form, my desk, direct messages): each kind turns what the
 * platform sent into a request for the intake.
 */
import { registerActions } from './actions.js';
import { registerCommands } from './commands.js';
import type { ListenerContext } from './context.js';
import { registerDesk } from './desk.js';
import { registerEvents } from './events.js';
import { registerForm } from './form.js';
import { registerMessages } from './messages.js';

export type { ListenerContext } from './context.js';

export const LISTENERS: Record<string, (ctx: ListenerContext) => void> = {
  commands: registerCommands,
  events: registerEvents,
  actions: registerActions,
  form: registerForm,
  desk: registerDesk,
  messages: registerMessages,
};

export function registerListeners(ctx: ListenerContext): void {
  for (const register of Object.values(LISTENERS)) register(ctx);
}
