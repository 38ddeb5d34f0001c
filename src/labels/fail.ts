/** src/labels belongs to the partition state: it refuses with the state's codes. */
export { badArgument, badState } from '../state/fail.js';
