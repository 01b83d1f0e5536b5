// Runs anywhere. The service contract in one import.
export * from './schemas';
export * from './contract';
export * from './service';
export * from './rxcalls';
export * from './records';
export * from './nullcalls';
export * from './spectrumcalls';
