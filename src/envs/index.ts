/**
 * The built-in control systems, by the `kind` a step file header names, so a reader can rebuild the
 * system a recording came from (for a what-if) without knowing the classes.
 */

import { CartPole, type CartPoleOptions } from './cartpole.ts';
import { MountainCar, type MountainCarOptions } from './mountaincar.ts';
import type { ControlSystem } from './types.ts';

export type ControlSystemKind = 'cart-pole' | 'mountain-car';
export const CONTROL_SYSTEM_KINDS: readonly ControlSystemKind[] = Object.freeze(['cart-pole', 'mountain-car']);

export type ControlSystemOptions = CartPoleOptions | MountainCarOptions;

export function isControlSystemKind(kind: string): kind is ControlSystemKind {
  return (CONTROL_SYSTEM_KINDS as readonly string[]).includes(kind);
}

export function createControlSystem(kind: 'cart-pole', options: CartPoleOptions): CartPole;
export function createControlSystem(kind: 'mountain-car', options: MountainCarOptions): MountainCar;
export function createControlSystem(kind: ControlSystemKind, options: ControlSystemOptions): ControlSystem;
export function createControlSystem(kind: ControlSystemKind, options: ControlSystemOptions): ControlSystem {
  // `kind` often comes from a file header, so it is checked at run time even though the type narrows it.
  switch (kind) {
    case 'cart-pole':
      return new CartPole(options);
    case 'mountain-car':
      return new MountainCar(options);
    default:
      throw new RangeError(
        `createControlSystem: unknown kind ${JSON.stringify(kind)}; expected one of ${CONTROL_SYSTEM_KINDS.join(', ')}`,
      );
  }
}

export * from './types.ts';
export * from './random.ts';
export * from './cartpole.ts';
export * from './mountaincar.ts';
