export * from './people';
export * from './rigs';
