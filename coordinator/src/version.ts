/** The coordinator's version: reported on /status and written into every exported model. */
export const COORDINATOR_VERSION = '0.1.0';
