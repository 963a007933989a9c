/**
 * The app's listeners, registered by kind (commands, events, and the interactive ones: actions,
 * views, shortcuts, my desk and direct messages): each kind turns what the platform sent into a
 * request for the intake.
 */
import { registerInteractive } from '../interactive.js';
import { registerCommands } from './commands.js';
import type { ListenerContext } from './context.js';
import { registerEvents } from './events.js';

export type { ListenerContext } from './context.js';

export const LISTENERS: Record<string, (ctx: ListenerContext) => void> = {
  commands: registerCommands,
  events: registerEvents,
  interactive: registerInteractive,
};

export function registerListeners(ctx: ListenerContext): void {
  for (const register of Object.values(LISTENERS)) register(ctx);
}
