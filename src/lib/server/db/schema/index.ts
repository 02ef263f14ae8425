export * from './people';
export * from './rigs';
export * from './pins';
