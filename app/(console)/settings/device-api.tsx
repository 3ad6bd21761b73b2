import React from 'react';
import { Linking, Platform } from 'react-native';
import { DeviceApiScreen, OPENAPI_PATH } from '../../../components/device-api-screen';
import { useBreakpoints } from '../../../components/breakpoints';

export default function DeviceApi() {
  const { wide } = useBreakpoints();
  const origin = Platform.OS === 'web' && typeof window !== 'undefined' ? window.location.origin : 'https://console.fernhollow.example';
  return (
    <DeviceApiScreen
      origin={origin}
      wide={wide}
      onOpenDocument={() => {
        if (Platform.OS === 'web' && typeof window !== 'undefined') window.open(OPENAPI_PATH, '_blank', 'noopener');
        else void Linking.openURL(`${origin}${OPENAPI_PATH}`);
      }}
    />
  );
}
