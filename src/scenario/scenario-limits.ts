// Limits on reading a scenario, applied before and while parsing: a scenario is a page of
// settings, not data, so anything far larger is a mistake (a wrong path, a device, a bomb).

/** Most bytes of scenario text read from a file, pipe or device (1 MiB); reading stops past it. */
export const SCENARIO_TEXT_BYTES_MAX = 1024 * 1024;

/**
 * Most alias expansions while turning YAML into values (the yaml library's maxAliasCount), so
 * that nested aliases (a "billion laughs" document) cannot grow without bound. No scenario field
 * needs more than a few.
 */
export const SCENARIO_YAML_ALIASES_MAX = 100;
