/** Commands that load heavy modules (TensorFlow.js) register here, so `summary` starts fast. */
export {};
