// A connection's 'error' must always have a listener: Node's EventEmitter throws an 'error' event that
// nobody listens to (Node.js documentation, "Error events"), which would end the server when PostgreSQL
// ends a session (57P01) before Sequelize has attached its own listener.
import { EventEmitter } from 'node:events';
import pg from 'pg';
import { GuardedClient } from '../../server/db';

describe('the database client', () => {
  test('when a plain EventEmitter emits an error with no listener, then it throws (the rule the guard answers)', () => {
    expect(() => new EventEmitter().emit('error', new Error('x'))).toThrow('x');
  });

  test('when a new connection emits an error before anyone listens, then the process goes on and the connection is marked invalid', () => {
    const client = new GuardedClient({ host: '127.0.0.1', port: 1 });
    const terminated = Object.assign(new Error('terminating connection due to administrator command'), { code: '57P01' });
    expect(() => client.emit('error', terminated)).not.toThrow();
    expect((client as unknown as { _invalid: boolean })._invalid).toBe(true);
    expect(client).toBeInstanceOf(pg.Client);
  });
});
