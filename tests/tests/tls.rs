//! TLS end to end with certificates made at test time (rcgen): a client that trusts the
//! server's certificate gets answers; a plaintext client, and a TLS client trusting another
//! certificate, get none; a missing key file stops the start naming the file.

use ratewell_e2e::requests::{MK_III, lookup};
use ratewell_e2e::{TestServer, test_config};
use ratewell_proto::pb::rates_client::RatesClient;
use std::net::SocketAddr;
use std::path::PathBuf;
use tonic::transport::{Certificate, Channel, ClientTlsConfig, Endpoint};

/// A self-signed certificate for "localhost" written as PEM files; removed on drop.
struct TestCert {
    dir: PathBuf,
    cert_pem: String,
}

impl TestCert {
    fn new(label: &str) -> Self {
        let dir = std::env::temp_dir().join(format!("ratewell-tls-{label}-{}", std::process::id()));
        std::fs::create_dir_all(&dir).expect("dir");
        let made = rcgen::generate_simple_self_signed(vec!["localhost".to_string()]).expect("certificate");
        let cert_pem = made.cert.pem();
        std::fs::write(dir.join("cert.pem"), &cert_pem).expect("cert");
        std::fs::write(dir.join("key.pem"), made.signing_key.serialize_pem()).expect("key");
        Self { dir, cert_pem }
    }

    fn config(&self) -> ratewell_service::config::Config {
        ratewell_service::config::Config {
            tls_cert_file: Some(self.dir.join("cert.pem")),
            tls_key_file: Some(self.dir.join("key.pem")),
            ..test_config()
        }
    }
}

impl Drop for TestCert {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.dir);
    }
}

/// A TLS channel to `addr` trusting `ca_pem`, checking the name "localhost".
fn tls_channel(addr: SocketAddr, ca_pem: &str) -> Channel {
    let tls = ClientTlsConfig::new()
        .ca_certificate(Certificate::from_pem(ca_pem))
        .domain_name("localhost");
    Endpoint::from_shared(format!("https://{addr}"))
        .expect("url")
        .tls_config(tls)
        .expect("tls config")
        .connect_lazy()
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn only_a_client_trusting_the_certificate_gets_answers() {
    let cert = TestCert::new("serve");
    let ca = cert.cert_pem.clone();
    let server = TestServer::try_start_via(cert.config(), move |addr| tls_channel(addr, &ca))
        .await
        .expect("a TLS server starts");
    let answer = server
        .rates()
        .lookup_rates(lookup(MK_III, vec![1e4]))
        .await
        .expect("a lookup over TLS")
        .into_inner();
    assert!(answer.stamp.is_some() && !answer.excitation.is_empty());

    let plain = Endpoint::from_shared(format!("http://{}", server.addr()))
        .expect("url")
        .connect_lazy();
    let refused = RatesClient::new(plain)
        .lookup_rates(lookup(MK_III, vec![1e4]))
        .await
        .expect_err("a plaintext client gets no answer from a TLS server");
    assert_ne!(refused.code(), tonic::Code::Ok);

    let other = TestCert::new("other");
    let refused = RatesClient::new(tls_channel(server.addr(), &other.cert_pem))
        .lookup_rates(lookup(MK_III, vec![1e4]))
        .await
        .expect_err("a client trusting another certificate gets no answer");
    assert_eq!(refused.code(), tonic::Code::Unavailable, "{refused:?}");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_missing_key_file_stops_the_start_naming_it() {
    let cert = TestCert::new("missing-key");
    let config = ratewell_service::config::Config {
        tls_key_file: Some(cert.dir.join("no-such-key.pem")),
        ..cert.config()
    };
    let error = match TestServer::try_start(config).await {
        Ok(_) => panic!("a server without its key must not start"),
        Err(e) => e.to_string(),
    };
    assert!(error.contains("no-such-key.pem"), "{error}");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn the_client_library_speaks_tls_trusting_a_ca_file() {
    use ratewell_client::{Client, ClientConfig, DatasetRef, RateQuery, TlsSettings};
    let cert = TestCert::new("client");
    let ca = cert.cert_pem.clone();
    let server = TestServer::try_start_via(cert.config(), move |addr| tls_channel(addr, &ca))
        .await
        .expect("a TLS server starts");
    let demo = DatasetRef::new("demo").expect("id");
    let query = RateQuery::new(MK_III, vec![1e4]);
    let address = format!("localhost:{}", server.addr().port());

    // "host:port" with TLS settings becomes https://; the certificate names "localhost".
    let client = Client::new(
        ClientConfig::new(address.clone())
            .with_dataset(demo.clone())
            .with_tls(TlsSettings::new(cert.dir.join("cert.pem"))),
    )
    .expect("client");
    let answer = client.lookup_rates(&query).await.expect("a lookup over TLS");
    assert_eq!(answer.temperature_count, 1);

    // Trusting another certificate: no answer, and the client says which endpoint failed.
    let other = TestCert::new("client-other");
    let mut wrong_ca = ClientConfig::new(address.clone())
        .with_dataset(demo.clone())
        .with_tls(TlsSettings::new(other.dir.join("cert.pem")));
    wrong_ca.retry.max_attempts = 1;
    let error = Client::new(wrong_ca)
        .expect("client")
        .lookup_rates(&query)
        .await
        .expect_err("an untrusted certificate");
    assert!(error.to_string().contains(&address), "{error}");

    // Plain HTTP/2 against the TLS server gets nothing either.
    let mut plain = ClientConfig::new(format!("http://{address}")).with_dataset(demo.clone());
    plain.retry.max_attempts = 1;
    assert!(
        Client::new(plain)
            .expect("client")
            .lookup_rates(&query)
            .await
            .is_err()
    );

    // https:// without TLS settings, and a CA file that is not there, are refused up front.
    let e = Client::new(ClientConfig::new(format!("https://{address}")).with_dataset(demo.clone()))
        .expect_err("https without a CA");
    assert!(e.to_string().contains("https:// needs TLS settings"), "{e}");
    let e = ClientConfig::new(address)
        .with_tls(TlsSettings::new(cert.dir.join("missing.pem")))
        .validate()
        .expect_err("no CA file");
    assert!(e.to_string().starts_with("tls.ca_file = "), "{e}");
}
