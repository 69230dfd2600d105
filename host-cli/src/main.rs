fn main() {
    println!("tenmin: not yet");
}
