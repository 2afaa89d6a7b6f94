/**
 * The app's version: package.json's `version`, server/config.ts's APP_VERSION and the OpenAPI
 * document's `info.version` say the same (tests/unit/offline/version.test.ts checks it). The offline
 * package @gammaline/calc is published under it.
 */
export const APP_VERSION = '0.2.0';

/** The path version of the API whose answers the calculations give: /api/v1. */
export const API_PATH_VERSION = 'v1';
