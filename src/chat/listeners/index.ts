/**
 * The app's listeners, registered by kind (commands, events; actions and views join here as
 * they are added): each kind is one small module that turns what the platform sent into a
 * request for the intake.
 */
import { registerCommands } from './commands.js';
import type { ListenerContext } from './context.js';
import { registerEvents } from './events.js';

export type { ListenerContext } from './context.js';

export const LISTENERS: Record<string, (ctx: ListenerContext) => void> = {
  commands: registerCommands,
  events: registerEvents,
};

export function registerListeners(ctx: ListenerContext): void {
  for (const register of Object.values(LISTENERS)) register(ctx);
}
