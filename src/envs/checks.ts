/**
 * Argument checks shared by the control systems. A what-if restores states read back from a step
 * file, so a bad state must be refused with a message that says which system and which field,
 * rather than silently producing NaN physics several steps later.
 */

import type { PhysicalState } from './types.ts';

export function checkAction(kind: string, action: number, actions: readonly string[]): void {
  if (!Number.isInteger(action) || action < 0 || action >= actions.length) {
    const allowed = actions.map((name, index) => `${index} ('${name}')`).join(', ');
    throw new RangeError(`${kind}: action ${action} is not one of ${allowed}`);
  }
}

export function checkTimeLimit(kind: string, timeLimit: number): void {
  if (!Number.isInteger(timeLimit) || timeLimit < 1) {
    throw new RangeError(`${kind}: timeLimit must be a positive integer, got ${timeLimit}`);
  }
}

export function checkNonNegative(kind: string, name: string, value: number): void {
  if (!(Number.isFinite(value) && value >= 0)) {
    throw new RangeError(`${kind}: ${name} must be a finite number >= 0, got ${value}`);
  }
}

export function checkPhysicalState(kind: string, state: PhysicalState, dimNames: readonly string[]): void {
  const { vars, stepCount, rng } = state;
  if (!Array.isArray(vars) || vars.length !== dimNames.length) {
    const got = Array.isArray(vars) ? `${vars.length} values` : typeof vars;
    throw new RangeError(`${kind}: state.vars must hold ${dimNames.length} numbers (${dimNames.join(', ')}), got ${got}`);
  }
  vars.forEach((value, index) => {
    if (typeof value !== 'number' || !Number.isFinite(value)) {
      throw new RangeError(`${kind}: state.vars[${index}] (${dimNames[index]}) must be a finite number, got ${value}`);
    }
  });
  if (!Number.isInteger(stepCount) || stepCount < 0) {
    throw new RangeError(`${kind}: state.stepCount must be an integer >= 0, got ${stepCount}`);
  }
  if (!Number.isInteger(rng) || rng < 0 || rng > 0xffffffff) {
    throw new RangeError(`${kind}: state.rng must be an unsigned 32-bit integer, got ${rng}`);
  }
}
