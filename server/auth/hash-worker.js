// Runs in a worker thread (server/auth/passwords.ts): bcrypt hashing and comparing, so a flood of
// sign-ins never stalls the event loop that serves every other request. Plain JavaScript, so the
// worker starts the same way under tsx, jest and node.
'use strict';
const bcrypt = require('bcryptjs');

module.exports = async function passwordWork(task) {
  if (task.op === 'hash') return bcrypt.hash(task.password, task.cost);
  if (task.op === 'compare') return bcrypt.compare(task.password, task.hash);
  throw new Error(`unknown password task: ${task.op}`);
};
