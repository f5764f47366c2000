import { initBackend } from '../../src/agent/network.ts';

/** Put the tests on the wasm backend (the one episcope runs on), falling back to cpu and saying so. */
export async function useTestBackend(): Promise<string> {
  const choice = await initBackend();
  console.info(`agent tests: TensorFlow.js backend '${choice.backend}'${choice.fallback ? ` (fallback: ${choice.reason})` : ''}`);
  return choice.backend;
}
