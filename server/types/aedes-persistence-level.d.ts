declare module 'aedes-persistence-level/asyncPersistence.js' {
  /** aedes 1.x async persistence backed by a level database (>= 9). */
  export default class AsyncLevelPersistence {
    constructor(db: unknown);
    setup(broker: unknown): Promise<void>;
  }
}
