/** Values as people write them: the same module as the CLI's text output and the bench sheet. */
export * from '../../../server/units/display.js';
