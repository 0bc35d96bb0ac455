package dev.stopline.testing;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Map;
import java.util.concurrent.TimeUnit;

import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.admin.AdminClientConfig;
import org.junit.jupiter.api.Test;

class KafkaBrokerResourceTest {

    @Test
    void start_givesQuarkusTheBrokerAddress_andStopReleasesIt() throws Exception {
        KafkaBrokerResource r = new KafkaBrokerResource();
        Map<String, String> config = r.start();
        String servers = config.get("kafka.bootstrap.servers");
        try {
            assertEquals("false", config.get("quarkus.kafka.devservices.enabled"));
            try (Admin admin = Admin.create(Map.of(AdminClientConfig.BOOTSTRAP_SERVERS_CONFIG, servers))) {
                assertEquals(1, admin.describeCluster().nodes().get(10, TimeUnit.SECONDS).size());
            }
        } finally {
            r.stop();
        }
        int port = Integer.parseInt(servers.substring(servers.lastIndexOf(':') + 1));
        assertTrue(port > 0);
        try (java.net.Socket s = new java.net.Socket()) {
            assertFalse(connects(s, port), "nothing listens on " + servers + " after stop");
        }
    }

    private static boolean connects(java.net.Socket s, int port) {
        try {
            s.connect(new java.net.InetSocketAddress("127.0.0.1", port), 500);
            return true;
        } catch (java.io.IOException e) {
            return false;
        }
    }
}
