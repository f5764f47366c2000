import { describe, expect, it } from 'vitest';
import {
  CONTROL_SYSTEM_KINDS,
  CartPole,
  MountainCar,
  createControlSystem,
  isControlSystemKind,
} from '../../src/envs/index.ts';

describe('control system registry', () => {
  it('builds each kind a step file header may name', () => {
    expect(createControlSystem('cart-pole', { seed: 1 })).toBeInstanceOf(CartPole);
    expect(createControlSystem('mountain-car', { seed: 1 })).toBeInstanceOf(MountainCar);
    for (const kind of CONTROL_SYSTEM_KINDS) {
      expect(createControlSystem(kind, { seed: 1 }).description.kind).toBe(kind);
    }
  });

  it('passes options through', () => {
    const trolley = createControlSystem('cart-pole', { seed: 1, timeLimit: 50, cartFriction: 0.01 });
    expect(trolley.timeLimit).toBe(50);
    expect(trolley.params.cartFriction).toBe(0.01);
  });

  it('names the unknown kind and the known ones', () => {
    const fromHeader = 'acrobot' as string;
    expect(isControlSystemKind(fromHeader)).toBe(false);
    expect(() => createControlSystem(fromHeader as 'cart-pole', { seed: 1 })).toThrow(
      /unknown kind "acrobot"; expected one of cart-pole, mountain-car/,
    );
  });
});
