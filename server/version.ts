/** The brink version reported by the service and the command line. */
export const VERSION = '0.1.0';
