'use strict';

/**
 * search_fold(text): a text as searches compare it, lower case and without accents, so "Zoe" finds
 * "Zoë" and "Muller" finds "Müller" (also "Soren" finds "Søren", "strasse" finds "Straße"). It uses
 * PostgreSQL's unaccent extension (a trusted extension: the database's owner may create it) where
 * the server has it; a server without it gets the common Latin letters folded by translate().
 * Immutable (unaccent with its dictionary named), so an index may use it later.
 */
const FROM = 'ÀÁÂÃÄÅàáâãäåÇçÈÉÊËèéêëÌÍÎÏìíîïÑñÒÓÔÕÖØòóôõöøÙÚÛÜùúûüÝýÿŁłŚśŹźŻżŃńĆćĘęĄąŠšŽžČčŘřĎďŤťŇňŮůĞğİıŞşŐőŰű';
const TO = 'AAAAAAaaaaaaCcEEEEeeeeIIIIiiiiNnOOOOOOooooooUUUUuuuuYyyLlSsZzZzNnCcEeAaSsZzCcRrDdTtNnUuGgIiSsOoUu';

module.exports = {
  async up(queryInterface) {
    const [rows] = await queryInterface.sequelize.query(`SELECT 1 FROM pg_available_extensions WHERE name = 'unaccent'`);
    if (rows.length > 0) {
      await queryInterface.sequelize.query('CREATE EXTENSION IF NOT EXISTS unaccent');
      await queryInterface.sequelize.query(
        `CREATE FUNCTION search_fold(text) RETURNS text LANGUAGE sql IMMUTABLE PARALLEL SAFE STRICT
           AS $$ SELECT lower(public.unaccent('public.unaccent'::regdictionary, normalize($1, NFC))) $$`,
      );
    } else {
      await queryInterface.sequelize.query(
        `CREATE FUNCTION search_fold(text) RETURNS text LANGUAGE sql IMMUTABLE PARALLEL SAFE STRICT
           AS $$ SELECT replace(replace(lower(translate(normalize($1, NFC), '${FROM}', '${TO}')), 'ß', 'ss'), 'æ', 'ae') $$`,
      );
    }
  },

  async down(queryInterface) {
    await queryInterface.sequelize.query('DROP FUNCTION IF EXISTS search_fold(text)');
    await queryInterface.sequelize.query('DROP EXTENSION IF EXISTS unaccent');
  },
};
