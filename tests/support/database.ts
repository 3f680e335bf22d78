/**
 * Opens the throwaway test database in every test file's process, as the web server and the
 * worker open theirs, so tests can read and arrange rows through the models. Unit tests run
 * alone (no DRAWERLIGHT_TEST_RUN) open nothing.
 */
import { openDatabase } from '../../src/lib/server/database.ts';

if (process.env.DRAWERLIGHT_TEST_RUN) openDatabase();
