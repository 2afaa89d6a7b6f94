import { openDatabase } from './client.ts';
import { migrateDatabase } from './migrate.ts';

const url = process.env.DATABASE_URL;
if (!url) {
  console.error('Set DATABASE_URL to the PostgreSQL database to migrate (npm start sets it for its own cluster).');
  process.exit(2);
}
const database = openDatabase(url, { max: 1 });
try {
  await migrateDatabase(database.pool);
  console.log('migrations applied');
} finally {
  await database.close();
}
