export * from './people';
export * from './rigs';
export * from './runs';
export * from './pins';
