// Runs anywhere. The service contract in one import.
export * from './schemas';
export * from './contract';
export * from './service';
export * from './session';
export * from './receivers';
export * from './plans';
export * from './records';
export * from './nullfit';
export * from './spectrum';
