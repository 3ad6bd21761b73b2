import React from 'react';
import { useRouter } from 'expo-router';
import { LoggersScreen } from '../../../components/loggers-screen';
import { useBreakpoints } from '../../../components/breakpoints';
import { useLoggers, type LoggerFilter } from '../../../hooks/loggers';
import { useMe } from '../../../hooks/session';
import { useModels } from '../../../hooks/models';

export default function Loggers() {
  const router = useRouter();
  const me = useMe();
  const { wide } = useBreakpoints();
  const [filter, setFilter] = React.useState<LoggerFilter>({ page: 1, pageSize: 25 });
  const loggers = useLoggers(filter);
  const models = useModels();
  const intervals = React.useMemo(() => Object.fromEntries((models.data?.rows ?? []).map((m) => [m.id, m.checkInIntervalS])), [models.data]);
  const role = me.data?.role;
  return (
    <LoggersScreen
      state={loggers}
      filter={filter}
      onFilter={setFilter}
      wide={wide}
      intervals={intervals}
      canRegister={role === 'admin' || role === 'integrator'}
      onRegister={() => router.push('/loggers/register')}
      onOpen={(id) => router.push(`/loggers/${id}` as never)}
    />
  );
}
