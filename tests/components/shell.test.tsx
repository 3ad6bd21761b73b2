// The signed-in frame keeps the page mounted when the layout switches between the phone's tab bar and
// the wide sidebar: a width change (a turned tablet, a print preview laying the page out at paper
// width) must not lose what a page holds — above all the labels of a batch, whose tokens are shown once.
import React from 'react';
import { Pressable, Text } from 'react-native';
import { render } from './render';
import { Shell } from '../../components/shell';
import type { Me } from '../../schemas/auth';

jest.mock('expo-router', () => ({ Link: ({ children }: { children: React.ReactNode }) => children }));
jest.mock('react-native-safe-area-context', () => ({ useSafeAreaInsets: () => ({ top: 0, bottom: 0, left: 0, right: 0 }) }));

const me = { id: 'u1', name: 'Morgan', email: 'morgan@fernhollow.example', role: 'admin' } as unknown as Me;
const destinations = [
  { href: '/', label: 'Overview', icon: 'overview', roles: [], tab: true },
  { href: '/loggers', label: 'Loggers', icon: 'loggers', roles: [], tab: true },
] as never;

/** A page holding state of its own, as the labels screen holds the tokens it was given. */
function Page() {
  const [count, setCount] = React.useState(0);
  return (
    <Pressable testID="count" onPress={() => setCount((n) => n + 1)}>
      <Text testID="held">{`held ${count}`}</Text>
    </Pressable>
  );
}

function Frame() {
  const [wide, setWide] = React.useState(true);
  return (
    <>
      <Pressable testID="resize" onPress={() => setWide((w) => !w)} />
      <Shell me={me} wide={wide} pathname="/loggers/register" destinations={destinations} onSignOut={() => undefined}>
        <Page />
      </Shell>
    </>
  );
}

test('when the layout switches from wide to phone and back, then the page keeps its state', () => {
  const view = render(<Frame />);
  view.press('count');
  view.press('count');
  expect(view.byTestId('held').textContent).toBe('held 2');
  expect(view.container.querySelector('[role="navigation"]')).not.toBeNull();
  view.press('resize'); // phone: the tab bar instead of the sidebar
  expect(view.container.querySelector('[role="navigation"]')).toBeNull();
  expect(view.container.querySelector('[role="tablist"]')).not.toBeNull();
  expect(view.byTestId('held').textContent).toBe('held 2');
  view.press('resize'); // wide again
  expect(view.byTestId('held').textContent).toBe('held 2');
  view.unmount();
});
