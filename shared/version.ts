/** The tool version recorded in every export's provenance. Kept equal to package.json by a test. */
export const VERSION = '0.1.0';
export const TOOL_NAME = 'subtherm';
